import { createHash } from 'node:crypto';
import { copyFileSync, existsSync, mkdirSync, readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openDatabase, readMigrations, defaultMigrationsDir, findPackageRoot } from '../../src/store/openDatabase.js';
import { isStoreError } from '../../src/store/storeError.js';
import { makeTempDir } from '../helpers/tempDir.js';

// Numbers relative to the shipped migrations, so a new one in migrations/ does not break these tests.
const SHIPPED = readMigrations(defaultMigrationsDir());
const LATEST = SHIPPED.at(-1)!.version;
const NEXT = LATEST + 1;
const NEXT_NAME = String(NEXT).padStart(3, '0');
const FUTURE = LATEST + 7;

const sha256 = (file: string): string => createHash('sha256').update(readFileSync(file)).digest('hex');

function codeOf(fn: () => unknown): string | undefined {
  try {
    fn();
  } catch (error) {
    return isStoreError(error) ? error.code : `not a StoreError: ${String(error)}`;
  }
  return undefined;
}

describe('openDatabase', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let migrationsDir: string;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    // A private copy of the real migrations, so tests can add a newer one.
    migrationsDir = join(tmp.dir, 'migrations');
    mkdirSync(migrationsDir);
    for (const name of readdirSync(defaultMigrationsDir()).filter((n) => n.endsWith('.sql'))) copyFileSync(join(defaultMigrationsDir(), name), join(migrationsDir, name));
  });
  afterEach(() => tmp.cleanup());

  it('creates folder and file with incremental auto-vacuum, WAL, foreign keys, FULL sync and a busy timeout', () => {
    const path = join(tmp.dir, 'deep', 'er', 'pairwatch.db');
    const { db, created, applied, backupFile } = openDatabase(path, { migrationsDir });
    try {
      expect(created).toBe(true);
      expect(backupFile).toBeNull();
      expect(applied).toEqual(SHIPPED.map((m) => m.version));
      // Values per the SQLite PRAGMA documentation: auto_vacuum 2 = INCREMENTAL, synchronous 2 = FULL.
      expect(db.pragma('auto_vacuum', { simple: true })).toBe(2);
      expect(db.pragma('journal_mode', { simple: true })).toBe('wal');
      expect(db.pragma('foreign_keys', { simple: true })).toBe(1);
      expect(db.pragma('synchronous', { simple: true })).toBe(2);
      expect(db.pragma('busy_timeout', { simple: true })).toBe(5000);
      const tables = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table'").pluck().all();
      expect(tables).toEqual(expect.arrayContaining(['schema_migrations', 'loop_status', 'alarms', 'audit', 'decoder_counter_marks']));
    } finally {
      db.close();
    }
  });

  it('applies each migration once and records it', () => {
    const path = join(tmp.dir, 'pw.db');
    openDatabase(path, { migrationsDir, now: () => Date.UTC(2026, 0, 1) }).db.close();
    const again = openDatabase(path, { migrationsDir });
    try {
      expect(again.applied).toEqual([]);
      expect(again.schemaVersion).toBe(LATEST);
      expect(again.backupFile).toBeNull();
      expect(again.db.prepare('SELECT version, name, applied_at FROM schema_migrations ORDER BY version').all()).toEqual(
        SHIPPED.map((m) => ({ version: m.version, name: m.name, applied_at: '2026-01-01T00:00:00.000Z' })),
      );
    } finally {
      again.db.close();
    }
  });

  it('backs up a database with data before migrating it, then migrates', () => {
    const path = join(tmp.dir, 'pw.db');
    const first = openDatabase(path, { migrationsDir });
    first.db.prepare("INSERT INTO kv (key, value) VALUES ('site', 'Larch Hollow')").run();
    first.db.close();

    writeFileSync(join(migrationsDir, `${NEXT_NAME}_extra.sql`), 'CREATE TABLE extra_notes (id INTEGER PRIMARY KEY, body TEXT);');
    const second = openDatabase(path, { migrationsDir });
    try {
      expect(second.applied).toEqual([NEXT]);
      expect(second.backupFile).toBe(`${path}.pre-${NEXT}.bak`);
      expect(second.db.prepare("SELECT value FROM kv WHERE key = 'site'").pluck().get()).toBe('Larch Hollow');
    } finally {
      second.db.close();
    }
    const backup = new Database(`${path}.pre-${NEXT}.bak`, { readonly: true });
    try {
      expect(backup.prepare("SELECT value FROM kv WHERE key = 'site'").pluck().get()).toBe('Larch Hollow');
      expect(backup.prepare('SELECT max(version) FROM schema_migrations').pluck().get()).toBe(LATEST);
      expect(backup.prepare("SELECT count(*) FROM sqlite_master WHERE name = 'extra_notes'").pluck().get()).toBe(0);
    } finally {
      backup.close();
    }
  });

  it('rolls back a failing migration and keeps the schema version', () => {
    const path = join(tmp.dir, 'pw.db');
    openDatabase(path, { migrationsDir }).db.close();
    writeFileSync(join(migrationsDir, `${NEXT_NAME}_broken.sql`), 'CREATE TABLE half_done (id INTEGER);\nCREATE TABLE oops (;');
    expect(codeOf(() => openDatabase(path, { migrationsDir }))).toBe('PW_STORE_MIGRATION_FAILED');
    const db = new Database(path, { readonly: true });
    try {
      expect(db.prepare('SELECT max(version) FROM schema_migrations').pluck().get()).toBe(LATEST);
      expect(db.prepare("SELECT count(*) FROM sqlite_master WHERE name = 'half_done'").pluck().get()).toBe(0);
    } finally {
      db.close();
    }
  });

  it('refuses a database newer than the code and leaves the file untouched', () => {
    const path = join(tmp.dir, 'pw.db');
    const { db } = openDatabase(path, { migrationsDir });
    db.prepare("INSERT INTO schema_migrations (version, name, applied_at) VALUES (?, 'future.sql', '2030-01-01T00:00:00.000Z')").run(FUTURE);
    db.close();
    const before = sha256(path);
    let message = '';
    try {
      openDatabase(path, { migrationsDir });
    } catch (error) {
      expect(isStoreError(error) && error.code).toBe('PW_STORE_TOO_NEW');
      message = (error as Error).message;
    }
    expect(message).toMatch(new RegExp(`schema version ${FUTURE}.*only knows up to version ${LATEST}`));
    expect(sha256(path)).toBe(before);
    expect(readdirSync(tmp.dir).filter((n) => n.startsWith('pw.db.pre-'))).toEqual([]);
  });

  it('refuses other SQLite databases and files that are not SQLite at all', () => {
    const foreign = join(tmp.dir, 'foreign.db');
    const other = new Database(foreign);
    other.exec('CREATE TABLE recipes (name TEXT)');
    other.close();
    expect(codeOf(() => openDatabase(foreign, { migrationsDir }))).toBe('PW_STORE_NOT_PAIRWATCH');
    const garbage = join(tmp.dir, 'garbage.db');
    writeFileSync(garbage, 'this is a shopping list, not a database\n'.repeat(200));
    expect(codeOf(() => openDatabase(garbage, { migrationsDir }))).toBe('PW_STORE_NOT_PAIRWATCH');
  });

  it('finds the migrations from src/ and from dist/src/ alike', () => {
    const root = findPackageRoot();
    expect(existsSync(join(root, 'migrations', '001_core.sql'))).toBe(true);
    const fromDist = pathToFileURL(join(root, 'dist', 'src', 'store', 'openDatabase.js')).href;
    expect(findPackageRoot(fromDist)).toBe(root);
  });
});
