import { join } from 'node:path';
import Database from 'better-sqlite3';
import type BetterSqlite3 from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { findLiveApiTokenByHash, insertApiToken, listApiTokens, revokeApiToken, countLoginFailures, deleteLoginFailure, deleteLoginFailuresBefore, insertLoginFailure, deleteUser, findUserByName, insertUser, listUsers, deleteExpiredWebSessions, findWebSession, insertWebSession, touchWebSession } from '../../src/store/accountRepos.js';
import { openDatabase } from '../../src/store/openDatabase.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';

let tmp: TempDir;
let db: BetterSqlite3.Database;
const T = Date.parse('2026-12-01T20:00:00.000Z');
beforeEach(() => {
  tmp = makeTempDir('pairwatch-repo-');
  db = openDatabase(join(tmp.dir, 'site.db')).db;
});
afterEach(() => {
  db.close();
  tmp?.cleanup();
});

const addUser = (name: string) => insertUser(db, { name, role: 'operator', passwordHash: 'h', passwordSalt: 's', createdAt: T })!;

describe('userRepo', () => {
  it('inserts once per name, lists without secrets, deletes with sessions', () => {
    const u = addUser('meg');
    expect(addUser('meg')).toBeNull();
    expect(listUsers(db)).toEqual([{ id: u.id, name: 'meg', role: 'operator', createdAt: T }]);
    insertWebSession(db, { idHash: 'abc', userId: u.id, csrfToken: 'c', createdAt: T, expiresAt: T + 1000 });
    expect(deleteUser(db, 'meg')).toBe(true);
    expect(findUserByName(db, 'meg')).toBeNull();
    expect(db.prepare('SELECT count(*) AS n FROM web_sessions').get()).toEqual({ n: 0 });
    expect(deleteUser(db, 'meg')).toBe(false);
  });
});

describe('webSessionRepo', () => {
  it('finds a session until it expires, then cleans it up', () => {
    const u = addUser('meg');
    insertWebSession(db, { idHash: 'abc', userId: u.id, csrfToken: 'c', createdAt: T, expiresAt: T + 1000 });
    expect(findWebSession(db, 'abc', T + 999)).toMatchObject({ userName: 'meg', role: 'operator', csrfToken: 'c', expiresAt: T + 1000 });
    expect(findWebSession(db, 'abc', T + 1000)).toBeNull();
    expect(findWebSession(db, 'other', T)).toBeNull();
    expect(deleteExpiredWebSessions(db, T + 1000)).toBe(1);
  });
});

describe('apiTokenRepo', () => {
  it('finds live tokens by hash only, keeps revoked rows', () => {
    insertApiToken(db, { name: 'station', tokenHash: 'h1', role: 'viewer', createdAt: T });
    expect(insertApiToken(db, { name: 'station', tokenHash: 'h2', role: 'viewer', createdAt: T })).toBeNull();
    expect(findLiveApiTokenByHash(db, 'h1')?.name).toBe('station');
    expect(revokeApiToken(db, 'station', T + 5)).toBe(true);
    expect(revokeApiToken(db, 'station', T + 6)).toBe(false);
    expect(findLiveApiTokenByHash(db, 'h1')).toBeNull();
    expect(listApiTokens(db)).toMatchObject([{ name: 'station', revokedAt: T + 5 }]);
  });

  // The live-token lookup is remembered between requests; these are the ways a revoke must still work
  // at once. The second connection stands for `pairwatch token revoke` run from a shell.
  it('a revoke from another process is seen by the very next lookup', () => {
    insertApiToken(db, { name: 'station', tokenHash: 'h1', role: 'operator', createdAt: T });
    expect(findLiveApiTokenByHash(db, 'h1')?.role).toBe('operator');
    expect(findLiveApiTokenByHash(db, 'h1')?.role).toBe('operator');
    const shell = new Database(join(tmp.dir, 'site.db'));
    try {
      expect(revokeApiToken(shell, 'station', T + 5)).toBe(true);
    } finally {
      shell.close();
    }
    expect(findLiveApiTokenByHash(db, 'h1')).toBeNull();
  });

  // A caller on a hot path may pace the question about other connections' commits; this is the bound it
  // then keeps: a revoke from another process is seen once `everyMs` has passed on the caller's clock.
  it('paced by the caller, another process\'s revoke is seen as soon as everyMs has passed', () => {
    insertApiToken(db, { name: 'station', tokenHash: 'h1', role: 'operator', createdAt: T });
    const paced = (at: number) => findLiveApiTokenByHash(db, 'h1', { at, everyMs: 1 });
    expect(paced(100)?.role).toBe('operator');
    const shell = new Database(join(tmp.dir, 'site.db'));
    try {
      expect(revokeApiToken(shell, 'station', T + 5)).toBe(true);
    } finally {
      shell.close();
    }
    // Within the millisecond the repo does not ask again (that is the saving)...
    expect(paced(100.5)?.role).toBe('operator');
    // ...and from the next one on it does.
    expect(paced(101)).toBeNull();
  });

  it('paced by the caller, a clock that went back asks again rather than trusting the old answer', () => {
    insertApiToken(db, { name: 'station', tokenHash: 'h1', role: 'operator', createdAt: T });
    expect(findLiveApiTokenByHash(db, 'h1', { at: 100, everyMs: 1 })?.role).toBe('operator');
    const shell = new Database(join(tmp.dir, 'site.db'));
    try {
      revokeApiToken(shell, 'station', T + 5);
    } finally {
      shell.close();
    }
    expect(findLiveApiTokenByHash(db, 'h1', { at: 50, everyMs: 1 })).toBeNull();
  });

  it('paced by the caller, a write on this connection is still seen by the very next lookup', () => {
    insertApiToken(db, { name: 'station', tokenHash: 'h1', role: 'operator', createdAt: T });
    expect(findLiveApiTokenByHash(db, 'h1', { at: 100, everyMs: 1 })?.role).toBe('operator');
    db.prepare('UPDATE api_tokens SET revoked_at = ? WHERE name = ?').run(new Date(T + 5).toISOString(), 'station');
    expect(findLiveApiTokenByHash(db, 'h1', { at: 100, everyMs: 1 })).toBeNull();
  });

  it('a change made by hand on another connection (not through the repo) is seen too', () => {
    insertApiToken(db, { name: 'station', tokenHash: 'h1', role: 'operator', createdAt: T });
    expect(findLiveApiTokenByHash(db, 'h1')?.role).toBe('operator');
    const shell = new Database(join(tmp.dir, 'site.db'));
    try {
      shell.prepare(`UPDATE api_tokens SET role = 'viewer' WHERE name = 'station'`).run();
    } finally {
      shell.close();
    }
    expect(findLiveApiTokenByHash(db, 'h1')?.role).toBe('viewer');
  });

  it('a write on the same connection outside the repo is seen too', () => {
    insertApiToken(db, { name: 'station', tokenHash: 'h1', role: 'operator', createdAt: T });
    expect(findLiveApiTokenByHash(db, 'h1')).not.toBeNull();
    db.prepare('UPDATE api_tokens SET revoked_at = ? WHERE name = ?').run(new Date(T + 5).toISOString(), 'station');
    expect(findLiveApiTokenByHash(db, 'h1')).toBeNull();
  });

  it('hands out a token nobody can change for the others who present it', () => {
    insertApiToken(db, { name: 'station', tokenHash: 'h1', role: 'viewer', createdAt: T });
    const found = findLiveApiTokenByHash(db, 'h1')!;
    expect(() => {
      (found as { role: string }).role = 'admin';
    }).toThrow(TypeError);
    expect(findLiveApiTokenByHash(db, 'h1')?.role).toBe('viewer');
  });
});

describe('loginFailureRepo', () => {
  it('counts failures per address and per name inside the window', () => {
    insertLoginFailure(db, { name: 'meg', ip: '192.0.2.1', at: T - 61_000 });
    insertLoginFailure(db, { name: 'meg', ip: '192.0.2.1', at: T - 30_000 });
    insertLoginFailure(db, { name: 'tom', ip: '192.0.2.1', at: T - 10_000 });
    insertLoginFailure(db, { name: 'meg', ip: '192.0.2.2', at: T });
    expect(countLoginFailures(db, { name: 'meg', ip: '192.0.2.1', sinceAt: T - 60_000 })).toEqual({ byIp: 2, byName: 2 });
    expect(deleteLoginFailuresBefore(db, T - 60_000)).toBe(1);
  });
});

describe('statements are prepared once per connection, not per request (issue 14)', () => {
  it('a second round of every account query prepares nothing', () => {
    const round = (i: number) => {
      const u = addUser(`user${i}`);
      findUserByName(db, `user${i}`);
      listUsers(db);
      insertWebSession(db, { idHash: `s${i}`, userId: u.id, csrfToken: 'c', createdAt: T, expiresAt: T + 1000 });
      findWebSession(db, `s${i}`, T, 60_000);
      touchWebSession(db, `s${i}`, T + 1);
      deleteExpiredWebSessions(db, T, 60_000);
      insertApiToken(db, { name: `t${i}`, tokenHash: `h${i}`, role: 'viewer', createdAt: T });
      findLiveApiTokenByHash(db, `h${i}`);
      listApiTokens(db);
      revokeApiToken(db, `t${i}`, T);
      const id = insertLoginFailure(db, { name: `user${i}`, ip: '192.0.2.1', at: T });
      countLoginFailures(db, { name: `user${i}`, ip: '192.0.2.1', sinceAt: T - 60_000 });
      deleteLoginFailure(db, id);
      deleteUser(db, `user${i}`);
    };
    round(1);
    const prepare = vi.spyOn(db, 'prepare');
    for (let i = 2; i < 12; i++) round(i);
    expect(prepare).not.toHaveBeenCalled();
  });
});
