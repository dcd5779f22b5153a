import { copyFileSync, existsSync, mkdirSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { defaultMigrationsDir } from '../../src/store/openDatabase.js';
import { openStore } from '../../src/store/openStore.js';
import { isStoreError } from '../../src/store/storeError.js';
import { lockFileFor } from '../../src/store/storeLock.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';

/**
 * openStore's promises around failure: an open that fails part-way leaves no lock file and no open
 * connection behind (so the next start, or a restore, is not refused by our own leftovers), and close
 * releases the lock even when the connection misbehaves. An open connection in WAL mode keeps
 * `<db>-wal`; SQLite removes it when the last connection closes (sqlite.org/wal.html), which is how
 * these tests see that the connection was closed.
 */
let tmp: TempDir;
let path: string;
beforeEach(() => {
  tmp = makeTempDir('pw-open-fail-');
  path = join(tmp.dir, 'site.db');
});
afterEach(() => tmp.cleanup());

const codeOf = (run: () => unknown): string => {
  try {
    run();
  } catch (error) {
    return isStoreError(error) ? error.code : `${(error as { code?: string }).code ?? 'no code'}: ${String(error)}`;
  }
  return 'no error';
};

describe('openStore: a failed open leaves nothing behind', () => {
  it('a file that is not a database: refused, and the lock is released', () => {
    writeFileSync(path, 'a spreadsheet saved under the wrong name '.repeat(200));
    expect(codeOf(() => openStore({ path }))).toBe('PW_STORE_NOT_PAIRWATCH');
    expect(existsSync(lockFileFor(path))).toBe(false);
  });

  it('a failure after the database opened (repositories over an incomplete schema): the connection is closed and the lock released', () => {
    // A migrations folder holding only the first migration: the file opens, the repositories do not.
    const partial = join(tmp.dir, 'partial-migrations');
    mkdirSync(partial);
    const first = readdirSync(defaultMigrationsDir()).filter((n) => n.endsWith('.sql')).sort()[0]!;
    copyFileSync(join(defaultMigrationsDir(), first), join(partial, first));
    expect(codeOf(() => openStore({ path, migrationsDir: partial }))).toMatch(/^SQLITE_ERROR: SqliteError: no such table/);
    expect(existsSync(lockFileFor(path))).toBe(false);
    expect(existsSync(`${path}-wal`)).toBe(false);
    // The next open with the full set brings the file up to date, lock and all.
    const store = openStore({ path });
    expect(existsSync(lockFileFor(path))).toBe(true);
    store.close();
  });

  it('a tool opening without the lock gets the same refusal, not an error about the missing lock', () => {
    writeFileSync(path, 'a spreadsheet saved under the wrong name '.repeat(200));
    expect(codeOf(() => openStore({ path, lock: false }))).toBe('PW_STORE_NOT_PAIRWATCH');
    const other = join(tmp.dir, 'other.db');
    const partial = join(tmp.dir, 'partial-migrations');
    mkdirSync(partial);
    const first = readdirSync(defaultMigrationsDir()).filter((n) => n.endsWith('.sql')).sort()[0]!;
    copyFileSync(join(defaultMigrationsDir(), first), join(partial, first));
    expect(codeOf(() => openStore({ path: other, migrationsDir: partial, lock: false }))).toMatch(/^SQLITE_ERROR: SqliteError: no such table/);
  });

  it('without cache_kib the connection keeps the build default page cache', () => {
    const plain = new Database(join(tmp.dir, 'plain.db'));
    const buildDefault = plain.pragma('cache_size', { simple: true });
    plain.close();
    const store = openStore({ path });
    expect(store.db.pragma('cache_size', { simple: true })).toBe(buildDefault);
    store.close();
  });

  it('a page cache below 1 KiB is raised to 1 KiB; fractions are rounded', () => {
    const small = openStore({ path, cacheKib: 0.2 });
    expect(small.db.pragma('cache_size', { simple: true })).toBe(-1);
    small.close();
    const fraction = openStore({ path, cacheKib: 2048.6 });
    expect(fraction.db.pragma('cache_size', { simple: true })).toBe(-2049);
    fraction.close();
  });
});

describe('openStore: close', () => {
  it('closes the connection (the WAL file goes) and releases the lock', () => {
    const store = openStore({ path });
    store.kv.set('a', '1');
    expect(existsSync(`${path}-wal`)).toBe(true);
    store.close();
    expect(store.db.open).toBe(false);
    expect(existsSync(`${path}-wal`)).toBe(false);
    expect(existsSync(lockFileFor(path))).toBe(false);
  });

  it('a failing optimize (a disk gone bad at shutdown) does not stop the close', () => {
    const store = openStore({ path });
    store.kv.set('a', '1');
    const real = store.db.pragma.bind(store.db);
    store.db.pragma = ((source: string, options?: Database.PragmaOptions) => {
      if (source === 'optimize') throw Object.assign(new Error('disk I/O error'), { code: 'SQLITE_IOERR' });
      return real(source, options);
    }) as typeof store.db.pragma;
    expect(() => store.close()).not.toThrow();
    expect(store.db.open).toBe(false);
    expect(existsSync(lockFileFor(path))).toBe(false);
  });

  it('a connection that throws on close still gives the lock back', () => {
    const store = openStore({ path });
    const realClose = store.db.close.bind(store.db);
    store.db.close = () => {
      realClose();
      throw new Error('close failed');
    };
    expect(() => store.close()).toThrow('close failed');
    expect(existsSync(lockFileFor(path))).toBe(false);
    // A second close is a no-op, not a second throw.
    expect(() => store.close()).not.toThrow();
  });

  it('a connection someone else already closed: close only releases the lock', () => {
    const store = openStore({ path });
    store.db.close();
    let pragmaCalls = 0;
    store.db.pragma = (() => {
      pragmaCalls += 1;
      throw new TypeError('The database connection is not open');
    }) as typeof store.db.pragma;
    expect(() => store.close()).not.toThrow();
    expect(pragmaCalls).toBe(0);
    expect(existsSync(lockFileFor(path))).toBe(false);
  });
});

describe('openStore: options reach the database', () => {
  it('busyTimeoutMs sets how long a write waits for another connection', () => {
    const store = openStore({ path, busyTimeoutMs: 40 });
    try {
      expect(store.db.pragma('busy_timeout', { simple: true })).toBe(40);
    } finally {
      store.close();
    }
    const plain = openStore({ path });
    try {
      // openDatabase's default, 5 s.
      expect(plain.db.pragma('busy_timeout', { simple: true })).toBe(5_000);
    } finally {
      plain.close();
    }
  });

  it('now stamps the migrations it applies; migrationsDir chooses which are applied', () => {
    const migrationsDir = join(tmp.dir, 'migrations');
    mkdirSync(migrationsDir);
    for (const name of readdirSync(defaultMigrationsDir()).filter((n) => n.endsWith('.sql'))) copyFileSync(join(defaultMigrationsDir(), name), join(migrationsDir, name));
    writeFileSync(join(migrationsDir, '999_site_notes.sql'), 'CREATE TABLE site_notes (id INTEGER PRIMARY KEY, text TEXT NOT NULL);\n');
    const store = openStore({ path, migrationsDir, now: () => Date.UTC(2026, 5, 1, 12) });
    try {
      expect(store.opened.applied.at(-1)).toBe(999);
      expect(store.db.prepare("SELECT count(*) FROM sqlite_master WHERE name = 'site_notes'").pluck().get()).toBe(1);
      expect(new Set(store.db.prepare('SELECT applied_at FROM schema_migrations').pluck().all())).toEqual(new Set(['2026-06-01T12:00:00.000Z']));
    } finally {
      store.close();
    }
  });
});
