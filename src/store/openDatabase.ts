// The database file: opening it with the right pragmas, applying numbered migrations, finding the package's migrations folder, its size, and free sibling paths for copies.
import { existsSync, statSync, readdirSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import Database from 'better-sqlite3';
import { StoreError, describeError } from './storeError.js';
import { makePrivateDir, makePrivateFile, tightenIfPresent } from './privateFiles.js';
import { fileURLToPath } from 'node:url';

export type SqliteDatabase = Database.Database;

export interface OpenDatabaseOptions {
  /** Default: the package's migrations/ folder. */
  migrationsDir?: string;
  /** How long a writer waits for another connection's lock before SQLITE_BUSY. */
  busyTimeoutMs?: number;
  /** Stamped into schema_migrations.applied_at; the shell passes its clock. */
  now?: () => number;
}

export interface OpenedDatabase {
  db: SqliteDatabase;
  /** The file did not exist (or was empty) before this call. */
  created: boolean;
  schemaVersion: number;
  /** Versions applied by this call, in order. */
  applied: number[];
  /** The copy written before migrating a database that already held data; null if none was needed. */
  backupFile: string | null;
}

const DEFAULT_BUSY_TIMEOUT_MS = 5_000;

/**
 * Opens (creating if needed) a pairwatch database and brings its schema up to date.
 * A database from a newer pairwatch is refused before anything is written to it, so a downgrade
 * can never damage the data of an upgrade.
 */
export function openDatabase(path: string, options: OpenDatabaseOptions = {}): OpenedDatabase {
  const migrations = readMigrations(options.migrationsDir ?? defaultMigrationsDir());
  const knownVersion = migrations[migrations.length - 1]?.version ?? 0;
  const now = options.now ?? Date.now;

  try {
    makePrivateDir(dirname(path));
  } catch (error) {
    throw new StoreError('PW_STORE_OPEN_FAILED', `cannot create the folder for ${path}: ${describeError(error)}`, { cause: error });
  }
  const created = !existsSync(path) || statSync(path).size === 0;
  try {
    // Owner-only before SQLite opens it, so the -wal and -shm it creates are owner-only too.
    makePrivateFile(path);
    tightenIfPresent(`${path}-wal`, `${path}-shm`);
  } catch (error) {
    throw new StoreError('PW_STORE_OPEN_FAILED', `cannot open ${path}: ${describeError(error)}`, { cause: error });
  }

  let db: SqliteDatabase;
  try {
    db = new Database(path);
  } catch (error) {
    throw new StoreError('PW_STORE_OPEN_FAILED', `cannot open ${path}: ${describeError(error)}`, { cause: error });
  }

  try {
    db.pragma(`busy_timeout = ${Math.max(0, Math.round(options.busyTimeoutMs ?? DEFAULT_BUSY_TIMEOUT_MS))}`);
    const current = created ? null : inspectVersion(db, path);
    if (current !== null && current > knownVersion) {
      throw new StoreError(
        'PW_STORE_TOO_NEW',
        `${path} has schema version ${current}, but this pairwatch only knows up to version ${knownVersion}: ` +
          'run the newer pairwatch that wrote it, or restore a backup made by this version. The file was not changed.',
      );
    }

    // auto_vacuum can only be chosen before the first table exists; retention relies on it to give space back.
    if (created) db.pragma('auto_vacuum = INCREMENTAL');
    db.pragma('journal_mode = WAL');
    // FULL: a committed state change or alarm survives a power cut, not only a crash (NORMAL in WAL
    // mode may lose the last transactions). High-rate edges are batched, so the fsyncs stay few.
    db.pragma('synchronous = FULL');
    db.pragma('foreign_keys = ON');
    db.exec(
      'CREATE TABLE IF NOT EXISTS schema_migrations (version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TEXT NOT NULL)',
    );

    const pending = migrations.filter((m) => m.version > (current ?? 0));
    let backupFile: string | null = null;
    const target = pending[pending.length - 1];
    if (target && current !== null) {
      backupFile = uniqueSiblingPath(`${path}.pre-${target.version}.bak`);
      try {
        makePrivateFile(backupFile);
        db.prepare('VACUUM INTO ?').run(backupFile);
      } catch (error) {
        throw new StoreError(
          'PW_STORE_BACKUP_FAILED',
          `cannot write the pre-migration backup ${backupFile}; nothing was migrated: ${describeError(error)}`,
          { cause: error },
        );
      }
    }

    const record = db.prepare('INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, ?, ?)');
    const applied: number[] = [];
    for (const migration of pending) {
      try {
        db.transaction(() => {
          db.exec(migration.sql);
          record.run(migration.version, migration.name, new Date(now()).toISOString());
        })();
      } catch (error) {
        throw new StoreError(
          'PW_STORE_MIGRATION_FAILED',
          `migration ${migration.name} failed and was rolled back (schema stays at version ` +
            `${applied[applied.length - 1] ?? current ?? 0}): ${describeError(error)}`,
          { cause: error },
        );
      }
      applied.push(migration.version);
    }
    return { db, created, schemaVersion: Math.max(current ?? 0, ...applied), applied, backupFile };
  } catch (error) {
    db.close();
    if (error instanceof StoreError) throw error;
    throw new StoreError('PW_STORE_OPEN_FAILED', `cannot open ${path}: ${describeError(error)}`, { cause: error });
  }
}

/** The recorded schema version, or null for a file with no tables yet. Reads only. */
function inspectVersion(db: SqliteDatabase, path: string): number | null {
  let tables: string[];
  try {
    tables = (db.prepare("SELECT name FROM sqlite_master WHERE type = 'table'").all() as Array<{ name: string }>).map(
      (row) => row.name,
    );
  } catch (error) {
    const code = (error as { code?: unknown }).code;
    if (code === 'SQLITE_NOTADB') {
      throw new StoreError('PW_STORE_NOT_PAIRWATCH', `${path} is not a SQLite database`, { cause: error });
    }
    throw error;
  }
  if (!tables.includes('schema_migrations')) {
    if (tables.length === 0) return null;
    throw new StoreError(
      'PW_STORE_NOT_PAIRWATCH',
      `${path} is a SQLite database but not a pairwatch one (no schema_migrations table); it was left alone`,
    );
  }
  const row = db.prepare('SELECT max(version) AS version FROM schema_migrations').get() as { version: number | null };
  return row.version;
}

export interface Migration {
  version: number;
  /** File name, e.g. 001_core.sql. */
  name: string;
  sql: string;
}

/** Numbered files only (`NNN_words.sql`); anything else in the folder is ignored, not guessed at. */
const MIGRATION_FILE = /^(\d{3,})_[A-Za-z0-9_-]+\.sql$/;

export function readMigrations(dir: string): Migration[] {
  let names: string[];
  try {
    names = readdirSync(dir);
  } catch (error) {
    throw new StoreError('PW_STORE_NO_MIGRATIONS', `cannot read the migrations folder ${dir}: ${describeError(error)}`, {
      cause: error,
    });
  }
  const migrations: Migration[] = [];
  const seen = new Map<number, string>();
  for (const name of names) {
    const match = MIGRATION_FILE.exec(name);
    if (!match?.[1]) continue;
    const version = Number(match[1]);
    const clash = seen.get(version);
    if (clash) throw new StoreError('PW_STORE_NO_MIGRATIONS', `migrations ${clash} and ${name} have the same number ${version}`);
    seen.set(version, name);
    migrations.push({ version, name, sql: readFileSync(join(dir, name), 'utf8') });
  }
  if (migrations.length === 0) throw new StoreError('PW_STORE_NO_MIGRATIONS', `no NNN_name.sql files in ${dir}`);
  return migrations.sort((a, b) => a.version - b.version);
}

/**
 * The folder holding pairwatch's package.json, found by walking up from this module. The same code
 * runs from src/store (vitest) and from dist/src/store (after tsc), so a fixed `../..` would be wrong
 * in one of them.
 */
export function findPackageRoot(fromUrl: string = import.meta.url): string {
  let dir = dirname(fileURLToPath(fromUrl));
  for (;;) {
    const candidate = join(dir, 'package.json');
    if (existsSync(candidate)) {
      try {
        const pkg = JSON.parse(readFileSync(candidate, 'utf8')) as { name?: unknown };
        if (pkg.name === 'pairwatch') return dir;
      } catch {
        // an unreadable package.json is not ours; keep walking
      }
    }
    const parent = dirname(dir);
    if (parent === dir) throw new Error('pairwatch package root not found above ' + fileURLToPath(fromUrl));
    dir = parent;
  }
}

export function defaultMigrationsDir(): string {
  return join(findPackageRoot(), 'migrations');
}

export interface DatabaseSize {
  /** page_count × page_size: the main file's size once the WAL is checkpointed. */
  bytes: number;
  /** Free pages inside the file (given back to the disk by incremental vacuum). */
  freeBytes: number;
}

export function databaseSize(db: SqliteDatabase): DatabaseSize {
  const pageSize = db.pragma('page_size', { simple: true }) as number;
  const pages = db.pragma('page_count', { simple: true }) as number;
  const free = db.pragma('freelist_count', { simple: true }) as number;
  return { bytes: pages * pageSize, freeBytes: free * pageSize };
}

/** `wanted` if free, else `wanted` with `.1`, `.2`, … before the extension: an earlier copy is never overwritten. */
export function uniqueSiblingPath(wanted: string): string {
  if (!existsSync(wanted)) return wanted;
  const dot = wanted.lastIndexOf('.');
  const stem = dot > 0 ? wanted.slice(0, dot) : wanted;
  const ext = dot > 0 ? wanted.slice(dot) : '';
  for (let n = 1; ; n++) {
    const candidate = `${stem}.${n}${ext}`;
    if (!existsSync(candidate)) return candidate;
  }
}
