import { chmodSync, closeSync, existsSync, mkdirSync, openSync } from 'node:fs';
import { dirname, resolve } from 'node:path';

/**
 * The database, its -wal/-shm, backups and mailed .eml files hold acknowledge links, session data and
 * password hashes: owner-only (files 0600, folders 0700) whatever the umask. Modes are set explicitly
 * with chmod, because a mode given at creation is still narrowed — never widened — by the umask, and a
 * umask of 022 would otherwise leave everything world-readable.
 */
export const PRIVATE_FILE_MODE = 0o600;
export const PRIVATE_DIR_MODE = 0o700;

/** Creates the folder (and missing parents) owner-only; folders that already exist keep their mode. */
export function makePrivateDir(dir: string): void {
  const missing: string[] = [];
  for (let at = resolve(dir); !existsSync(at); at = dirname(at)) {
    missing.unshift(at);
    if (dirname(at) === at) break;
  }
  mkdirSync(dir, { recursive: true, mode: PRIVATE_DIR_MODE });
  for (const created of missing) chmodSync(created, PRIVATE_DIR_MODE);
}

/**
 * Makes `file` owner-only, creating it empty if absent. Called before SQLite or a writer opens it, so
 * its content is never readable by others, not even for a moment. SQLite gives the -wal and -shm
 * files the database file's own permissions (SQLite os_unix.c, robustOpen/findCreateFileMode).
 */
export function makePrivateFile(file: string): void {
  const existed = existsSync(file);
  closeSync(openSync(file, 'a', PRIVATE_FILE_MODE));
  try {
    chmodSync(file, PRIVATE_FILE_MODE);
  } catch (error) {
    // Someone else's existing file (an admin running a command as another user) keeps its mode: the
    // owner chose it. A file this call created is always ours.
    if (!existed || (error as NodeJS.ErrnoException).code !== 'EPERM') throw error;
  }
}

/** chmod 0600 on whichever of these exist (a database's -wal and -shm left by an older version). */
export function tightenIfPresent(...files: string[]): void {
  for (const file of files) {
    try {
      chmodSync(file, PRIVATE_FILE_MODE);
    } catch {
      // not there (nothing to protect), or not ours to change
    }
  }
}
