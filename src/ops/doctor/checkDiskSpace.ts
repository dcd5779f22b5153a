import { dirname, resolve } from 'node:path';
import type { CheckResult } from './checkResult.js';
import { failed, passed, warned } from './checkResult.js';

export interface DiskDeps {
  /** Free bytes for an unprivileged writer on the filesystem holding `folder`. */
  freeBytes(folder: string): Promise<number>;
  exists(path: string): Promise<boolean>;
  writable(folder: string): Promise<boolean>;
  cwd(): string;
}

export const DISK_WARN_BYTES = 500 * 1024 * 1024;
export const DISK_FAIL_BYTES = 50 * 1024 * 1024;

/** Free space (and write access) where the database lives. */
export async function checkDiskSpace(storagePath: string, deps: DiskDeps): Promise<CheckResult> {
  const name = 'disk';
  const database = resolve(deps.cwd(), storagePath);
  const folder = dirname(database);
  // The folder may not exist before the first run; measure the filesystem it will be made on.
  let existing = folder;
  while (!(await deps.exists(existing)) && dirname(existing) !== existing) existing = dirname(existing);
  const relativeNote = storagePath.startsWith('/') ? '' : ` (storage.path is relative: resolved from ${deps.cwd()})`;

  let free: number;
  try {
    free = await deps.freeBytes(existing);
  } catch (err) {
    return failed(name, `cannot read free space at ${existing}: ${(err as Error).message}`, 'check that the storage folder is mounted');
  }
  const amount = formatBytes(free);
  if (free < DISK_FAIL_BYTES) {
    return failed(name, `only ${amount} free at ${existing}${relativeNote}`, 'free some space (old logs: journalctl --vacuum-size=200M) or move storage.path to a bigger disk');
  }
  if (existing === folder && !(await deps.writable(folder))) {
    return failed(name, `${folder} is not writable by this user${relativeNote}`, `give the service user the folder: sudo chown pairwatch: ${folder}`);
  }
  const where = existing === folder ? folder : `${existing} (${folder} does not exist yet; the monitor makes it)`;
  if (free < DISK_WARN_BYTES) return warned(name, `${amount} free at ${where}${relativeNote}`, 'free some space soon; the monitor raises "storage failing" if the disk fills');
  return passed(name, `${amount} free at ${where}${relativeNote}`);
}

function formatBytes(bytes: number): string {
  if (bytes >= 1024 ** 3) return `${(bytes / 1024 ** 3).toFixed(1)} GiB`;
  return `${Math.round(bytes / 1024 ** 2)} MiB`;
}
