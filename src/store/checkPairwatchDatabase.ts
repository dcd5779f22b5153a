import Database from 'better-sqlite3';
import { existsSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { newestDailyBackup } from './dailyBackup.js';
import { StoreError, describeError } from './storeError.js';

export interface PairwatchDatabaseInfo {
  schemaVersion: number;
  tables: string[];
}

/** Tables every pairwatch database has had since schema version 1. */
const REQUIRED_TABLES = ['schema_migrations', 'loop_status', 'state_changes', 'alarms', 'audit', 'kv'] as const;

/**
 * Opens `file` read-only and checks that it is an intact pairwatch database no newer than `knownVersion`.
 * Used before a restore, so a wrong or damaged file never replaces the live one.
 */
export function checkPairwatchDatabase(file: string, knownVersion: number): PairwatchDatabaseInfo {
  if (!existsSync(file)) throw new StoreError('PW_STORE_NOT_PAIRWATCH', `${file}: no such file`);
  let db: Database.Database;
  try {
    db = new Database(file, { readonly: true, fileMustExist: true });
  } catch (error) {
    throw new StoreError('PW_STORE_NOT_PAIRWATCH', `${file} cannot be opened as a SQLite database: ${describeError(error)}`, {
      cause: error,
    });
  }
  try {
    let tables: string[];
    try {
      tables = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").pluck().all() as string[];
    } catch (error) {
      throw new StoreError('PW_STORE_NOT_PAIRWATCH', `${file} is not a SQLite database: ${describeError(error)}`, { cause: error });
    }
    const missing = REQUIRED_TABLES.filter((t) => !tables.includes(t));
    if (missing.length > 0) {
      throw new StoreError('PW_STORE_NOT_PAIRWATCH', `${file} is not a pairwatch database (missing tables: ${missing.join(', ')})`);
    }
    const schemaVersion = (db.prepare('SELECT coalesce(max(version), 0) FROM schema_migrations').pluck().get() as number) ?? 0;
    if (schemaVersion > knownVersion) {
      throw new StoreError(
        'PW_STORE_TOO_NEW',
        `${file} has schema version ${schemaVersion}, newer than this pairwatch knows (${knownVersion}); use the pairwatch that wrote it`,
      );
    }
    const check = integrityProblems(db, 'quick');
    if (check.length > 0) {
      throw new StoreError('PW_STORE_NOT_PAIRWATCH', `${file} is damaged: ${check.slice(0, 3).join('; ')}`);
    }
    return { schemaVersion, tables };
  } finally {
    db.close();
  }
}

/**
 * What SQLite's own check finds wrong with the open file, [] when it is intact. `quick` is
 * PRAGMA quick_check (page structure and record format, O(N)); `full` is PRAGMA integrity_check, which also
 * matches every index against its table (sqlite.org/pragma.html). A page damaged badly enough makes the
 * pragma itself fail with SQLITE_CORRUPT: that is a finding too, not a crash.
 */
export function integrityProblems(db: Pick<Database.Database, 'prepare'>, depth: 'quick' | 'full', maxProblems = 10): string[] {
  try {
    const pragma = depth === 'quick' ? 'quick_check' : 'integrity_check';
    const rows = db.prepare(`PRAGMA ${pragma}(${Math.max(1, Math.floor(maxProblems))})`).pluck().all() as string[];
    return rows.length === 1 && rows[0] === 'ok' ? [] : rows;
  } catch (error) {
    return [describeError(error)];
  }
}

/** The same check on a file opened read-only beside whoever else has it open (doctor). */
export function fileIntegrityProblems(file: string, depth: 'quick' | 'full'): string[] {
  let db: Database.Database;
  try {
    db = new Database(file, { readonly: true, fileMustExist: true });
  } catch (error) {
    return [`cannot open it: ${describeError(error)}`];
  }
  try {
    return integrityProblems(db, depth);
  } finally {
    db.close();
  }
}

/** How to get a damaged database back: the newest daily backup and the commands, for the log, the trouble and doctor. */
export function restoreAdvice(databasePath: string): string {
  const backups = join(dirname(databasePath), 'backups');
  const newest = newestDailyBackup(backups);
  const stop = 'sudo systemctl stop pairwatch';
  const start = 'sudo systemctl start pairwatch';
  if (newest === null) {
    return `no daily backup was found in ${backups}: stop the monitor (${stop}), keep a copy of ${databasePath}, then either restore a backup you keep elsewhere (pairwatch restore FILE) or move the damaged file aside so the monitor starts a new one (${start})`;
  }
  return `restore the newest daily backup: ${stop}; pairwatch restore ${newest} (add --config FILE if yours is not the default); ${start} — changes since that backup are lost`;
}
