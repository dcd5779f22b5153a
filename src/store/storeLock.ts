import { closeSync, openSync, readFileSync, unlinkSync, writeSync } from 'node:fs';
import { makePrivateDir } from './privateFiles.js';
import { dirname } from 'node:path';
import { StoreError, describeError } from './storeError.js';

/**
 * `<db>.lock` holds the pid of the process that owns the database (the daemon), the kernel's start time
 * of that process and the database path. Restore refuses while a live process holds it; a lock left by
 * a process that died is taken over, so a crash never leaves the site unable to start. After a power
 * cut the pid may now belong to some other process: a holder counts only when its start time (Linux
 * /proc/PID/stat, field 22, proc(5)) is still the one written down, i.e. it is the same process.
 */
export interface StoreLock {
  readonly file: string;
  release(): void;
}

export interface LockHolder {
  pid: number;
  alive: boolean;
}

export function lockFileFor(dbPath: string): string {
  return `${dbPath}.lock`;
}

export function readLockHolder(dbPath: string): LockHolder | null {
  let text: string;
  try {
    text = readFileSync(lockFileFor(dbPath), 'utf8');
  } catch {
    return null;
  }
  const [pidText, startText] = text.split('\n');
  const pid = Number.parseInt(pidText ?? '', 10);
  if (!Number.isInteger(pid) || pid <= 0) return { pid: 0, alive: false };
  if (!isProcessAlive(pid)) return { pid, alive: false };
  // A reused pid: alive, but not the process that wrote the lock.
  const recorded = startText?.trim() ?? '';
  const current = processStartTime(pid);
  if (recorded !== '' && current !== null && recorded !== current) return { pid, alive: false };
  return { pid, alive: true };
}

/** The process's start time in clock ticks since boot (proc(5), /proc/PID/stat field 22); null off Linux. */
export function processStartTime(pid: number): string | null {
  try {
    const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
    // Field 2 (the command) is in parentheses and may hold spaces: count fields after its closing one.
    const fields = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return fields[19] ?? null;
  } catch {
    return null;
  }
}

export function acquireStoreLock(dbPath: string): StoreLock {
  const file = lockFileFor(dbPath);
  try {
    makePrivateDir(dirname(dbPath));
  } catch (error) {
    throw new StoreError('PW_STORE_OPEN_FAILED', `cannot create the folder for ${dbPath}: ${describeError(error)}`, { cause: error });
  }
  for (let attempt = 0; attempt < 2; attempt++) {
    let fd: number;
    try {
      fd = openSync(file, 'wx');
    } catch (error) {
      if ((error as NodeJS.ErrnoException).code !== 'EEXIST') {
        throw new StoreError('PW_STORE_OPEN_FAILED', `cannot create the lock file ${file}: ${describeError(error)}`, {
          cause: error,
        });
      }
      const holder = readLockHolder(dbPath);
      if (holder?.alive) {
        throw new StoreError(
          'PW_STORE_LOCKED',
          `${dbPath} is in use by process ${holder.pid} (lock file ${file}); stop the pairwatch daemon first`,
        );
      }
      try {
        unlinkSync(file); // stale: its process is gone
      } catch {
        // someone else removed it first; the next attempt decides
      }
      continue;
    }
    try {
      writeSync(fd, `${process.pid}\n${processStartTime(process.pid) ?? ''}\n${dbPath}\n`);
    } finally {
      closeSync(fd);
    }
    let released = false;
    return {
      file,
      release() {
        if (released) return;
        released = true;
        // Only remove our own lock: if it was taken over meanwhile, it is no longer ours to remove.
        if (readLockHolder(dbPath)?.pid === process.pid) {
          try {
            unlinkSync(file);
          } catch {
            // already gone
          }
        }
      },
    };
  }
  throw new StoreError('PW_STORE_LOCKED', `${dbPath}: another process took the lock file ${file} at the same moment`);
}

function isProcessAlive(pid: number): boolean {
  try {
    process.kill(pid, 0);
    return true;
  } catch (error) {
    // EPERM: the process exists but belongs to another user.
    return (error as NodeJS.ErrnoException).code === 'EPERM';
  }
}
