import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStore } from '../../src/store/openStore.js';
import { isStoreError } from '../../src/store/storeError.js';
import { lockFileFor } from '../../src/store/storeLock.js';
import { makeTempDir } from '../helpers/tempDir.js';

/** The pid of a process that has certainly exited. */
function deadPid(): number {
  const child = spawnSync(process.execPath, ['-e', 'process.stdout.write(String(process.pid))'], { encoding: 'utf8' });
  return Number(child.stdout);
}

describe('openStore', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let path: string;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    path = join(tmp.dir, 'pw.db');
  });
  afterEach(() => tmp.cleanup());

  it('holds <db>.lock with its pid while open and releases it on close', () => {
    const store = openStore({ path });
    expect(readFileSync(lockFileFor(path), 'utf8').split('\n')[0]).toBe(String(process.pid));
    let code: string | undefined;
    try {
      openStore({ path });
    } catch (error) {
      code = isStoreError(error) ? error.code : String(error);
    }
    expect(code).toBe('PW_STORE_LOCKED');
    // A tool working beside the daemon opens without the lock.
    const tool = openStore({ path, lock: false });
    tool.close();
    expect(existsSync(lockFileFor(path))).toBe(true);
    store.close();
    store.close(); // idempotent
    expect(existsSync(lockFileFor(path))).toBe(false);
  });

  it('takes over a stale lock left by a process that died', () => {
    writeFileSync(lockFileFor(path), `${deadPid()}\n`);
    const store = openStore({ path });
    expect(readFileSync(lockFileFor(path), 'utf8').split('\n')[0]).toBe(String(process.pid));
    store.close();
  });

  it('runs transaction work atomically and rolls it back on a throw', () => {
    const store = openStore({ path });
    try {
      expect(() =>
        store.transaction(() => {
          store.kv.set('a', '1');
          throw new Error('changed my mind');
        }),
      ).toThrow('changed my mind');
      expect(store.kv.get('a')).toBeNull();
      expect(store.transaction(() => (store.kv.set('a', '2'), store.transaction(() => store.kv.get('a'))))).toBe('2');
    } finally {
      store.close();
    }
  });
});
