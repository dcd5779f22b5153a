// Backup and restore: online copies of the live database, the rotated daily copy, the integrity check a copy must pass, and restoring one in place of the live file.
import { renameSync, rmSync, statSync, existsSync, readdirSync } from 'node:fs';
import { dirname, join } from 'node:path';
import type { Store } from './openStore.js';
import { makePrivateDir, makePrivateFile } from './privateFiles.js';
import { StoreError, describeError } from './storeError.js';
import Database from 'better-sqlite3';
import { defaultMigrationsDir, readMigrations, uniqueSiblingPath } from './openDatabase.js';
import { acquireStoreLock } from './storeLock.js';

export interface BackupResult {
  file: string;
  bytes: number;
  pages: number;
}

const PAGES_PER_STEP = 1_000;
const ALL_REMAINING = 0x7fffffff;

/**
 * Copies the live database with SQLite's online backup into `file`, while the daemon keeps writing.
 * Written to a temporary name and renamed, so `file` is either the old copy or a complete new one.
 * The copy is owner-only (0600, folders made 0700) whatever the umask: it holds what the database holds.
 */
export async function backupTo(store: Pick<Store, 'db'>, file: string): Promise<BackupResult> {
  const partial = `${file}.partial`;
  try {
    makePrivateDir(dirname(file));
    rmSync(partial, { force: true });
    // SQLite writes into the existing empty file and keeps its mode.
    makePrivateFile(partial);
    let lastRemaining = Number.POSITIVE_INFINITY;
    const result = await store.db.backup(partial, {
      // Chunks keep the event loop responsive. A write from another connection restarts the copy; if that
      // happens, finish in one step (a single read snapshot) rather than restart for ever under steady ingest.
      progress({ remainingPages }) {
        const restarted = remainingPages > lastRemaining;
        lastRemaining = remainingPages;
        return restarted ? ALL_REMAINING : PAGES_PER_STEP;
      },
    });
    renameSync(partial, file);
    return { file, bytes: statSync(file).size, pages: result.totalPages };
  } catch (error) {
    removeQuietly(partial);
    throw new StoreError('PW_STORE_BACKUP_FAILED', `backup to ${file} failed: ${describeError(error)}`, { cause: error });
  }
}

function removeQuietly(file: string): void {
  try {
    rmSync(file, { force: true });
  } catch {
    // nothing there to remove (or its folder is unusable, which the error being thrown already says)
  }
}

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

export const DAILY_BACKUP_PATTERN = /^pairwatch-(\d{8})\.db$/;

export interface DailyBackupResult {
  /** null when keep is 0 (daily backups switched off). */
  backup: BackupResult | null;
  removed: string[];
}

/** `pairwatch-YYYYMMDD.db` for the calendar day of `nowMs` in `timeZone` (the site's, so it matches the office wall). */
export function dailyBackupName(nowMs: number, timeZone = 'UTC'): string {
  const parts = new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).formatToParts(
    new Date(nowMs),
  );
  const part = (type: string): string => parts.find((p) => p.type === type)?.value ?? '';
  return `pairwatch-${part('year')}${part('month')}${part('day')}.db`;
}

/**
 * Writes today's backup into `dir` (replacing an earlier one of the same day) and keeps only the newest
 * `keep` daily files. Other files in the folder are never touched.
 */
export async function dailyBackup(
  store: Pick<Store, 'db'>,
  dir: string,
  keep: number,
  nowMs: number,
  timeZone = 'UTC',
): Promise<DailyBackupResult> {
  if (keep <= 0) return { backup: null, removed: [] };
  const backup = await backupTo(store, join(dir, dailyBackupName(nowMs, timeZone)));
  const daily = readdirSync(dir)
    .filter((name) => DAILY_BACKUP_PATTERN.test(name))
    .sort()
    .reverse();
  const removed: string[] = [];
  for (const name of daily.slice(keep)) {
    rmSync(join(dir, name), { force: true });
    removed.push(name);
  }
  return { backup, removed };
}

/** The newest `pairwatch-YYYYMMDD.db` in `dir`, as a full path, or null when there is none. */
export function newestDailyBackup(dir: string): string | null {
  if (!existsSync(dir)) return null;
  const newest = readdirSync(dir).filter((name) => DAILY_BACKUP_PATTERN.test(name)).sort().pop();
  return newest === undefined ? null : join(dir, newest);
}

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
