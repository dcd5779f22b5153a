import type { Database, Statement } from 'better-sqlite3';

interface AckTokenStatements {
  insert: Statement;
  find: Statement;
}
const cache = new WeakMap<Database, AckTokenStatements>();

function statements(db: Database): AckTokenStatements {
  let s = cache.get(db);
  if (!s) {
    s = {
      insert: db.prepare('INSERT INTO used_ack_tokens (token_id, used_at) VALUES (?, ?) ON CONFLICT (token_id) DO NOTHING'),
      find: db.prepare('SELECT used_at FROM used_ack_tokens WHERE token_id = ?'),
    };
    cache.set(db, s);
  }
  return s;
}

/** Spends a single-use token. True the first time; false when it was already used (a replayed link). */
export function markAckTokenUsed(db: Database, tokenId: string, at: number): boolean {
  return statements(db).insert.run(tokenId, new Date(at).toISOString()).changes === 1;
}

/** When the token was spent, or null: lets the confirmation page say "this link was already used" before any POST. */
export function ackTokenUsedAt(db: Database, tokenId: string): number | null {
  const row = statements(db).find.get(tokenId) as { used_at: string } | undefined;
  return row ? Date.parse(row.used_at) : null;
}
