import Database from 'better-sqlite3';
import { backupTo, type BackupResult } from './backupTo.js';
import { checkPairwatchDatabase } from './checkPairwatchDatabase.js';
import { StoreError, describeError } from './storeError.js';

/**
 * `pairwatch backup FILE` beside a running daemon: opens the database read-only — no lock, no migration,
 * so a freshly upgraded CLI never changes the schema under the daemon still running the old code —
 * and copies it with the online backup.
 */
export async function backupFileTo(dbPath: string, file: string): Promise<BackupResult> {
  // A newer schema is fine to copy, only not to open for writing: allow any version here.
  checkPairwatchDatabase(dbPath, Number.MAX_SAFE_INTEGER);
  let db: Database.Database;
  try {
    db = new Database(dbPath, { readonly: true, fileMustExist: true });
  } catch (error) {
    throw new StoreError('PW_STORE_OPEN_FAILED', `cannot open ${dbPath}: ${describeError(error)}`, { cause: error });
  }
  try {
    return await backupTo({ db }, file);
  } finally {
    db.close();
  }
}
