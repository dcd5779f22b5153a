import type BetterSqlite3 from 'better-sqlite3';

/** Failed sign-ins (table `login_failures`): kept for the record and counted for rate limiting. */

export function insertLoginFailure(db: BetterSqlite3.Database, failure: { name: string | null; ip: string | null; at: number }): void {
  db.prepare('INSERT INTO login_failures (name, ip, at) VALUES (?, ?, ?)').run(failure.name, failure.ip, new Date(failure.at).toISOString());
}

/** Failures since `sinceAt` (inclusive) from this IP and for this name, counted separately. */
export function countLoginFailures(
  db: BetterSqlite3.Database,
  query: { name: string | null; ip: string | null; sinceAt: number },
): { byIp: number; byName: number } {
  const since = new Date(query.sinceAt).toISOString();
  const count = (column: 'ip' | 'name', value: string | null) =>
    value === null
      ? 0
      : (db.prepare(`SELECT count(*) AS n FROM login_failures WHERE ${column} = ? AND at >= ?`).get(value, since) as { n: number }).n;
  return { byIp: count('ip', query.ip), byName: count('name', query.name) };
}

export function listLoginFailures(db: BetterSqlite3.Database, limit = 100): Array<{ name: string | null; ip: string | null; at: number }> {
  const rows = db.prepare('SELECT name, ip, at FROM login_failures ORDER BY id DESC LIMIT ?').all(limit) as Array<{
    name: string | null;
    ip: string | null;
    at: string;
  }>;
  return rows.map((row) => ({ name: row.name, ip: row.ip, at: Date.parse(row.at) }));
}

/** Keeps the table bounded under a long guessing attack. */
export function deleteLoginFailuresBefore(db: BetterSqlite3.Database, before: number): number {
  return db.prepare('DELETE FROM login_failures WHERE at < ?').run(new Date(before).toISOString()).changes;
}
