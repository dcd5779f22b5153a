import Database from 'better-sqlite3';
import { existsSync } from 'node:fs';
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
    const check = db.prepare('PRAGMA quick_check').pluck().all() as string[];
    if (check.length !== 1 || check[0] !== 'ok') {
      throw new StoreError('PW_STORE_NOT_PAIRWATCH', `${file} is damaged: ${check.slice(0, 3).join('; ')}`);
    }
    return { schemaVersion, tables };
  } finally {
    db.close();
  }
}
