import { spawn } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { openStore } from '../../src/store/openStore.js';
import { processStartTime } from '../../src/store/storeLock.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';

/**
 * Issue 16 item 8: after a power cut the pid in a stale lock file may belong to some other process by
 * now. A lock counts only while the process that wrote it is still running: same pid and same kernel
 * start time (proc(5), /proc/PID/stat field 22).
 */
let tmp: TempDir | null = null;
let child: ReturnType<typeof spawn> | null = null;
afterEach(() => {
  child?.kill('SIGKILL');
  child = null;
  tmp?.cleanup();
  tmp = null;
});

describe('stale lock file whose pid was reused', () => {
  it('is taken over when the pid now belongs to another process', async () => {
    tmp = makeTempDir('pw-faults-lock-');
    const dbPath = join(tmp.dir, 'site.db');
    // Another, unrelated process alive under the pid written in the lock.
    child = spawn('sleep', ['30'], { stdio: 'ignore' });
    await new Promise((r) => child!.once('spawn', r));
    const pid = child.pid!;
    const realStart = processStartTime(pid);
    expect(realStart).not.toBeNull();
    // Written by a pairwatch that ran before the power cut: same pid, but a different start time.
    writeFileSync(`${dbPath}.lock`, `${pid}\n${Number(realStart) + 12345}\n${dbPath}\n`);
    const store = openStore({ path: dbPath });
    store.close();
  });

  it('still refuses while the process that wrote it runs', async () => {
    tmp = makeTempDir('pw-faults-lock-');
    const dbPath = join(tmp.dir, 'site.db');
    child = spawn('sleep', ['30'], { stdio: 'ignore' });
    await new Promise((r) => child!.once('spawn', r));
    writeFileSync(`${dbPath}.lock`, `${child.pid}\n${processStartTime(child.pid!)}\n${dbPath}\n`);
    expect(() => openStore({ path: dbPath })).toThrow(/in use by process/);
  });
});
