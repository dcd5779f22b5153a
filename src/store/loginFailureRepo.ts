import type { Database, Statement } from 'better-sqlite3';

/**
 * Failed sign-ins (table `login_failures`): kept for the record and counted for rate limiting. A sign-in
 * reserves its row before the password is checked and takes it back when the password was right.
 */

interface LoginFailureStatements {
  insert: Statement;
  remove: Statement;
  countByIp: Statement;
  countByName: Statement;
  list: Statement;
  prune: Statement;
}
const cache = new WeakMap<Database, LoginFailureStatements>();

function statements(db: Database): LoginFailureStatements {
  let s = cache.get(db);
  if (!s) {
    s = {
      insert: db.prepare('INSERT INTO login_failures (name, ip, at) VALUES (?, ?, ?)'),
      remove: db.prepare('DELETE FROM login_failures WHERE id = ?'),
      countByIp: db.prepare('SELECT count(*) AS n FROM login_failures WHERE ip = ? AND at >= ?'),
      countByName: db.prepare('SELECT count(*) AS n FROM login_failures WHERE name = ? AND at >= ?'),
      list: db.prepare('SELECT name, ip, at FROM login_failures ORDER BY id DESC LIMIT ?'),
      prune: db.prepare('DELETE FROM login_failures WHERE at < ?'),
    };
    cache.set(db, s);
  }
  return s;
}

/** Returns the row's id, so a reservation can be taken back. */
export function insertLoginFailure(db: Database, failure: { name: string | null; ip: string | null; at: number }): number {
  return Number(statements(db).insert.run(failure.name, failure.ip, new Date(failure.at).toISOString()).lastInsertRowid);
}

/** Takes back a reserved attempt (the password was right). */
export function deleteLoginFailure(db: Database, id: number): void {
  statements(db).remove.run(id);
}

/** Failures since `sinceAt` (inclusive) from this IP and for this name, counted separately. */
export function countLoginFailures(db: Database, query: { name: string | null; ip: string | null; sinceAt: number }): { byIp: number; byName: number } {
  const since = new Date(query.sinceAt).toISOString();
  const s = statements(db);
  const count = (statement: Statement, value: string | null) => (value === null ? 0 : (statement.get(value, since) as { n: number }).n);
  return { byIp: count(s.countByIp, query.ip), byName: count(s.countByName, query.name) };
}

export function listLoginFailures(db: Database, limit = 100): Array<{ name: string | null; ip: string | null; at: number }> {
  const rows = statements(db).list.all(limit) as Array<{ name: string | null; ip: string | null; at: string }>;
  return rows.map((row) => ({ name: row.name, ip: row.ip, at: Date.parse(row.at) }));
}

/** Keeps the table bounded under a long guessing attack. */
export function deleteLoginFailuresBefore(db: Database, before: number): number {
  return statements(db).prune.run(new Date(before).toISOString()).changes;
}
