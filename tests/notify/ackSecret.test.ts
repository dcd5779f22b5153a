import { describe, expect, it } from 'vitest';
import { chmodSync, readFileSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { ACK_SECRET_FILE, loadOrCreateAckSecret } from '../../src/notify/ackSecret.js';
import { NotifyError } from '../../src/notify/notifyError.js';
import { useTempDirs } from '../helpers/tempDir.js';

describe('loadOrCreateAckSecret', () => {
  const tempDir = useTempDirs('each');

  it('creates a 256-bit key, owner-only, at first start and reads the same key later', () => {
    const dir = tempDir('pw-secret-');
    const data = join(dir, 'data');
    const first = loadOrCreateAckSecret(data);
    expect(first.length).toBe(32);
    expect(statSync(join(data, ACK_SECRET_FILE)).mode & 0o777).toBe(0o600);
    expect(loadOrCreateAckSecret(data).equals(first)).toBe(true);
    expect(readFileSync(join(data, ACK_SECRET_FILE), 'utf8').trim()).toBe(first.toString('hex'));
  });

  it('tightens a key file left readable by others', () => {
    const dir = tempDir('pw-secret-');
    loadOrCreateAckSecret(dir);
    chmodSync(join(dir, ACK_SECRET_FILE), 0o644);
    loadOrCreateAckSecret(dir);
    expect(statSync(join(dir, ACK_SECRET_FILE)).mode & 0o777).toBe(0o600);
  });

  it('refuses a damaged key file with a code and a plain reason', () => {
    const dir = tempDir('pw-secret-');
    writeFileSync(join(dir, ACK_SECRET_FILE), 'not a key\n', { mode: 0o600 });
    expect(() => loadOrCreateAckSecret(dir)).toThrow(NotifyError);
    try {
      loadOrCreateAckSecret(dir);
    } catch (err) {
      expect((err as NotifyError).code).toBe('PW_ACK_SECRET_INVALID');
      expect((err as Error).message).toContain('64-digit hex key');
    }
  });
});
