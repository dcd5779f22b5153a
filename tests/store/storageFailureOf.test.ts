import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterEach, describe, expect, it } from 'vitest';
import { fileGoneFailure, storageFailureOf, type StorageFailure } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';

/**
 * What a failing disk becomes for the user: a kind, SQLite's code name, the label of the write that hit
 * it, and advice in plain words. Where SQLite can be made to fail for real it is (a size cap for a full
 * database, a read-only connection, a held lock, a file that is not a database, a constraint); the
 * rest use the extended result code names SQLite documents (sqlite.org/rescode.html), which
 * better-sqlite3 puts on `error.code`.
 */
let tmp: TempDir | undefined;
const open: Array<{ close(): void }> = [];
afterEach(() => {
  for (const db of open.splice(0)) db.close();
  tmp?.cleanup();
  tmp = undefined;
});

function thrown(run: () => unknown): unknown {
  try {
    run();
  } catch (error) {
    return error;
  }
  throw new Error('expected a throw');
}

function freshStore(): Store {
  tmp = makeTempDir('pw-failure-kind-');
  const store = openStore({ path: join(tmp.dir, 'site.db') });
  open.push(store);
  return store;
}

const change = (s: Store, i: number) =>
  s.stateChanges.insert({ loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: i, at: 1_000 + i, reason: `change ${i} ${'x'.repeat(2000)}` });

describe('storageFailureOf with errors real SQLite raised', () => {
  it('a database that reached its size cap is disk-full, with the label, the code and what to do', () => {
    const store = freshStore();
    // PRAGMA max_page_count caps the file; growing past it fails as a full disk does (SQLITE_FULL).
    const pages = store.db.pragma('page_count', { simple: true }) as number;
    store.db.pragma(`max_page_count = ${pages + 2}`);
    const error = thrown(() => {
      for (let i = 0; i < 1000; i++) store.transaction(() => change(store, i));
    });
    expect((error as { code?: string }).code).toBe('SQLITE_FULL');
    expect(storageFailureOf(error, 'state')).toEqual({
      kind: 'disk-full',
      sqliteCode: 'SQLITE_FULL',
      label: 'state',
      message: "cannot write the database while storing state: the disk is full: free space on the data folder's disk (SQLITE_FULL)",
    });
  });

  it('a read-only connection is read-only; a lock held elsewhere is busy', () => {
    const store = freshStore();
    const reader = new Database(store.path, { readonly: true });
    open.push(reader);
    const readOnly = thrown(() => reader.prepare("INSERT INTO kv (key, value) VALUES ('a', 'b')").run());
    expect(storageFailureOf(readOnly, 'kv')).toMatchObject({ kind: 'read-only', sqliteCode: expect.stringMatching(/^SQLITE_READONLY/), label: 'kv' });
    expect(storageFailureOf(readOnly, 'kv')?.message).toMatch(/cannot be written: check permissions and whether the disk was remounted read-only/);

    const other = new Database(store.path, { timeout: 10 });
    open.push(other);
    store.db.exec('BEGIN IMMEDIATE');
    const busy = thrown(() => other.exec('BEGIN IMMEDIATE'));
    store.db.exec('ROLLBACK');
    expect(storageFailureOf(busy, 'alarm ack')).toMatchObject({ kind: 'busy', sqliteCode: 'SQLITE_BUSY', label: 'alarm ack' });
    expect(storageFailureOf(busy, 'alarm ack')?.message).toMatch(/another program keeps the database locked/);
  });

  it('a file that is not a database is corrupt, and the advice names the restore command', () => {
    tmp = makeTempDir('pw-failure-kind-');
    const path = join(tmp.dir, 'not-a-db.db');
    writeFileSync(path, 'these bytes are a shopping list, not SQLite pages '.repeat(100));
    const db = new Database(path);
    open.push(db);
    const error = thrown(() => db.prepare('SELECT * FROM sqlite_master').all());
    const failure = storageFailureOf(error, 'minute');
    expect(failure).toMatchObject({ kind: 'corrupt', sqliteCode: 'SQLITE_NOTADB', label: 'minute' });
    expect(failure?.message).toContain('restore the latest backup (`pairwatch restore FILE`)');
  });

  it('a constraint, a bug or a value without a code is not a storage failure (retrying cannot fix it)', () => {
    const store = freshStore();
    const orphan = thrown(() => store.audit.insert({ at: 1, actor: 'x', action: 'raise', alarmId: 999, loopId: null, note: null }));
    expect((orphan as { code?: string }).code).toMatch(/^SQLITE_CONSTRAINT/);
    expect(storageFailureOf(orphan, 'audit')).toBeNull();
    expect(storageFailureOf(new TypeError('x is undefined'), 'state')).toBeNull();
    expect(storageFailureOf(null, 'state')).toBeNull();
    expect(storageFailureOf(undefined, 'state')).toBeNull();
    expect(storageFailureOf({ code: 28 }, 'state')).toBeNull();
  });
});

describe('storageFailureOf by code name (sqlite.org/rescode.html)', () => {
  const kindOf = (code: string) => storageFailureOf(Object.assign(new Error('x'), { code }), 'l')?.kind ?? null;

  it('maps each primary code and its extended codes to one kind', () => {
    const table: Array<[string, StorageFailure['kind'] | null]> = [
      ['SQLITE_FULL', 'disk-full'],
      ['SQLITE_READONLY', 'read-only'],
      ['SQLITE_READONLY_DBMOVED', 'read-only'],
      ['SQLITE_IOERR', 'io-error'],
      ['SQLITE_IOERR_WRITE', 'io-error'],
      ['SQLITE_IOERR_FSYNC', 'io-error'],
      ['SQLITE_CORRUPT', 'corrupt'],
      ['SQLITE_CORRUPT_INDEX', 'corrupt'],
      ['SQLITE_NOTADB', 'corrupt'],
      ['SQLITE_CANTOPEN', 'cannot-open'],
      ['SQLITE_CANTOPEN_ISDIR', 'cannot-open'],
      ['SQLITE_BUSY', 'busy'],
      ['SQLITE_BUSY_SNAPSHOT', 'busy'],
      ['SQLITE_PROTOCOL', 'busy'],
      // Not storage: a different primary code that merely starts with the same letters, and others.
      ['SQLITE_FULLNESS', null],
      ['SQLITE_BUSYX', null],
      ['SQLITE_CONSTRAINT_FOREIGNKEY', null],
      ['SQLITE_ERROR', null],
      ['ENOSPC', null],
    ];
    expect(table.map(([code]) => [code, kindOf(code)])).toEqual(table);
  });

  it('gives each kind its own advice, with the code at the end', () => {
    const message = (code: string) => storageFailureOf(Object.assign(new Error('x'), { code }), 'edges')?.message;
    expect(message('SQLITE_IOERR_WRITE')).toBe(
      'cannot write the database while storing edges: the disk reported an input/output error: check the disk and its cable, and the system log (SQLITE_IOERR_WRITE)',
    );
    expect(message('SQLITE_CANTOPEN')).toBe(
      'cannot write the database while storing edges: the database file cannot be opened: check the data folder exists and is writable (SQLITE_CANTOPEN)',
    );
    expect(message('SQLITE_PROTOCOL')).toMatch(/another program keeps the database locked: stop it \(a backup or a manual sqlite3 session\) \(SQLITE_PROTOCOL\)$/);
  });

  it('a file swapped under the monitor says what was seen and how to put the database back', () => {
    const failure = fileGoneFailure('site.db was deleted', 'state');
    expect(failure).toMatchObject({ kind: 'file-gone', sqliteCode: 'PW_DB_FILE_GONE', label: 'state' });
    expect(failure.message.startsWith('site.db was deleted: the database file was deleted or replaced under the running monitor')).toBe(true);
    expect(failure.message).toContain('stop the monitor (sudo systemctl stop pairwatch)');
    expect(failure.message).toContain('pairwatch restore FILE');
  });
});
