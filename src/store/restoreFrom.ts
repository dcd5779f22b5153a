import Database from 'better-sqlite3';
import { existsSync, renameSync, rmSync } from 'node:fs';
import { checkPairwatchDatabase } from './checkPairwatchDatabase.js';
import { defaultMigrationsDir } from './packageRoot.js';
import { readMigrations } from './readMigrations.js';
import { StoreError, describeError } from './storeError.js';
import { acquireStoreLock } from './storeLock.js';
import { uniqueSiblingPath } from './uniqueSiblingPath.js';

export interface RestoreOptions {
  migrationsDir?: string;
  now?: () => number;
}

export interface RestoreResult {
  schemaVersion: number;
  /** Where the database that was replaced now lives; null if there was none. It is never deleted. */
  previousKeptAs: string | null;
}

/**
 * Replaces the database at `targetPath` with the backup `file`. Refused while a live process holds the
 * database's lock (the daemon must be stopped), and refused unless `file` is an intact pairwatch
 * database this version can read. The replaced database is kept beside it, not deleted.
 */
export async function restoreFrom(file: string, targetPath: string, options: RestoreOptions = {}): Promise<RestoreResult> {
  const migrations = readMigrations(options.migrationsDir ?? defaultMigrationsDir());
  const knownVersion = migrations[migrations.length - 1]?.version ?? 0;
  const { schemaVersion } = checkPairwatchDatabase(file, knownVersion);

  const lock = acquireStoreLock(targetPath);
  const incoming = `${targetPath}.restoring`;
  try {
    rmSync(incoming, { force: true });
    const source = new Database(file, { readonly: true, fileMustExist: true });
    try {
      await source.backup(incoming);
    } finally {
      source.close();
    }

    let previousKeptAs: string | null = null;
    if (existsSync(targetPath)) {
      settle(targetPath);
      const stamp = new Date((options.now ?? Date.now)()).toISOString().replace(/[-:]/g, '').replace(/\.\d{3}Z$/, 'Z');
      previousKeptAs = uniqueSiblingPath(`${targetPath}.before-restore-${stamp}.bak`);
      renameSync(targetPath, previousKeptAs);
      // If settling could not fold the WAL in (a damaged file), the WAL travels with the file it belongs to:
      // left behind, SQLite would replay it onto the restored database.
      for (const suffix of ['-wal', '-shm']) {
        if (existsSync(targetPath + suffix)) renameSync(targetPath + suffix, previousKeptAs + suffix);
      }
    }
    renameSync(incoming, targetPath);
    return { schemaVersion, previousKeptAs };
  } catch (error) {
    rmSync(incoming, { force: true });
    if (error instanceof StoreError) throw error;
    throw new StoreError('PW_STORE_RESTORE_FAILED', `restore of ${targetPath} from ${file} failed: ${describeError(error)}`, {
      cause: error,
    });
  } finally {
    lock.release();
  }
}

/** Opening and closing the last connection checkpoints the WAL into the main file and removes it. */
function settle(path: string): void {
  try {
    const db = new Database(path, { fileMustExist: true });
    try {
      db.pragma('wal_checkpoint(TRUNCATE)');
    } finally {
      db.close();
    }
  } catch {
    // a damaged file is moved aside as it is
  }
}
