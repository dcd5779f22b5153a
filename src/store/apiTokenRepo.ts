import type BetterSqlite3 from 'better-sqlite3';
import type { Statement } from 'better-sqlite3';
import type { UserRole } from './userRepo.js';

/** API tokens (table `api_tokens`): only the SHA-256 hash of a token is stored. Revoked rows are kept. */

export interface ApiTokenSummary {
  id: number;
  name: string;
  role: UserRole;
  createdAt: number;
  revokedAt: number | null;
}

interface TokenRow {
  id: number;
  name: string;
  role: UserRole;
  created_at: string;
  revoked_at: string | null;
}

const fromRow = (row: TokenRow): ApiTokenSummary => ({
  id: row.id,
  name: row.name,
  role: row.role,
  createdAt: Date.parse(row.created_at),
  revokedAt: row.revoked_at === null ? null : Date.parse(row.revoked_at),
});

interface TokenStatements {
  insert: Statement;
  findLive: Statement;
  findByName: Statement;
  revoke: Statement;
  list: Statement;
  /** This connection's writes and other connections' commits, as one text: any change of it may be a revoke. */
  changeStamp: Statement;
  /** Live tokens found since the stamp last moved (only hits: a flood of bad tokens must not grow it). */
  live: Map<string, ApiTokenSummary>;
  liveAtStamp: string;
}
const cache = new WeakMap<BetterSqlite3.Database, TokenStatements>();

/** Prepared once per connection: the live-token lookup runs on every API request. */
function statements(db: BetterSqlite3.Database): TokenStatements {
  let s = cache.get(db);
  if (!s) {
    s = {
      insert: db.prepare(`INSERT INTO api_tokens (name, token_hash, role, created_at) VALUES (?, ?, ?, ?) ON CONFLICT DO NOTHING`),
      findLive: db.prepare('SELECT id, name, role, created_at, revoked_at FROM api_tokens WHERE token_hash = ? AND revoked_at IS NULL'),
      findByName: db.prepare('SELECT id, name, role, created_at, revoked_at FROM api_tokens WHERE name = ?'),
      revoke: db.prepare('UPDATE api_tokens SET revoked_at = ? WHERE name = ? AND revoked_at IS NULL'),
      list: db.prepare('SELECT id, name, role, created_at, revoked_at FROM api_tokens ORDER BY name'),
      // data_version moves when another connection commits (sqlite.org/pragma.html#pragma_data_version);
      // total_changes() counts this connection's own writes (sqlite.org/lang_corefunc.html#total_changes).
      changeStamp: db.prepare(`SELECT data_version || ':' || total_changes() FROM pragma_data_version`).pluck(),
      live: new Map(),
      liveAtStamp: '',
    };
    cache.set(db, s);
  }
  return s;
}

/** Returns null when the name is already used (by a live or a revoked token). */
export function insertApiToken(
  db: BetterSqlite3.Database,
  token: { name: string; tokenHash: string; role: UserRole; createdAt: number },
): ApiTokenSummary | null {
  const result = statements(db).insert.run(token.name, token.tokenHash, token.role, new Date(token.createdAt).toISOString());
  if (result.changes === 0) return null;
  return { id: Number(result.lastInsertRowid), name: token.name, role: token.role, createdAt: token.createdAt, revokedAt: null };
}

/**
 * The live token with this hash, or null. Runs on every API request, so a token found is remembered
 * until anything at all is written to the database — by this process (the API or the monitor) or by
 * another (`pairwatch token revoke` from the shell) — and a revoke works from the next request on.
 */
export function findLiveApiTokenByHash(db: BetterSqlite3.Database, tokenHash: string): ApiTokenSummary | null {
  const s = statements(db);
  const stamp = s.changeStamp.get() as string;
  if (stamp !== s.liveAtStamp) {
    s.live.clear();
    s.liveAtStamp = stamp;
  }
  const known = s.live.get(tokenHash);
  if (known) return known;
  const row = s.findLive.get(tokenHash) as TokenRow | undefined;
  if (!row) return null;
  // Frozen: every request that presents this token shares the one object.
  const token = Object.freeze(fromRow(row));
  if (s.live.size >= LIVE_TOKENS_REMEMBERED) s.live.clear();
  s.live.set(tokenHash, token);
  return token;
}

/** More live tokens than a site has in use at once; past it the memory starts afresh. */
const LIVE_TOKENS_REMEMBERED = 256;

export function findApiTokenByName(db: BetterSqlite3.Database, name: string): ApiTokenSummary | null {
  const row = statements(db).findByName.get(name) as TokenRow | undefined;
  return row ? fromRow(row) : null;
}

/** False when no live token has this name. */
export function revokeApiToken(db: BetterSqlite3.Database, name: string, at: number): boolean {
  return (
    statements(db).revoke.run(new Date(at).toISOString(), name).changes > 0
  );
}

export function listApiTokens(db: BetterSqlite3.Database): ApiTokenSummary[] {
  return (statements(db).list.all() as TokenRow[]).map(fromRow);
}
