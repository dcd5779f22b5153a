import { afterEach, describe, expect, it } from 'vitest';
import { chmodSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { ACK_SECRET_FILE, loadOrCreateAckSecret } from '../../src/notify/ackSecret.js';
import { NotifyError } from '../../src/notify/notifyError.js';

describe('loadOrCreateAckSecret', () => {
  let dir: string;
  afterEach(() => rmSync(dir, { recursive: true, force: true }));

  it('creates a 256-bit key, owner-only, at first start and reads the same key later', () => {
    dir = mkdtempSync(join(tmpdir(), 'pw-secret-'));
    const data = join(dir, 'data');
    const first = loadOrCreateAckSecret(data);
    expect(first.length).toBe(32);
    expect(statSync(join(data, ACK_SECRET_FILE)).mode & 0o777).toBe(0o600);
    expect(loadOrCreateAckSecret(data).equals(first)).toBe(true);
    expect(readFileSync(join(data, ACK_SECRET_FILE), 'utf8').trim()).toBe(first.toString('hex'));
  });

  it('tightens a key file left readable by others', () => {
    dir = mkdtempSync(join(tmpdir(), 'pw-secret-'));
    loadOrCreateAckSecret(dir);
    chmodSync(join(dir, ACK_SECRET_FILE), 0o644);
    loadOrCreateAckSecret(dir);
    expect(statSync(join(dir, ACK_SECRET_FILE)).mode & 0o777).toBe(0o600);
  });

  it('refuses a damaged key file with a code and a plain reason', () => {
    dir = mkdtempSync(join(tmpdir(), 'pw-secret-'));
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
