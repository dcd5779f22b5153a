// Accounts: users, their web sessions, API tokens, and failed logins counted for lockout.
import type BetterSqlite3 from 'better-sqlite3';
import type { Statement, Database } from 'better-sqlite3';

/** Web users (table `users`). Times are epoch ms here and ISO 8601 UTC text in the database. */

export const USER_ROLES = ['viewer', 'operator', 'admin'] as const;
export type UserRole = (typeof USER_ROLES)[number];

export interface UserRecord {
  id: number;
  name: string;
  role: UserRole;
  passwordHash: string;
  passwordSalt: string;
  createdAt: number;
}

export type UserSummary = Omit<UserRecord, 'passwordHash' | 'passwordSalt'>;

interface UserRow {
  id: number;
  name: string;
  role: UserRole;
  password_hash: string;
  password_salt: string;
  created_at: string;
}

function fromRow(row: UserRow): UserRecord {
  return {
    id: row.id,
    name: row.name,
    role: row.role,
    passwordHash: row.password_hash,
    passwordSalt: row.password_salt,
    createdAt: Date.parse(row.created_at),
  };
}

export interface NewUser {
  name: string;
  role: UserRole;
  passwordHash: string;
  passwordSalt: string;
  createdAt: number;
}

interface UserStatements {
  insert: Statement;
  byName: Statement;
  byId: Statement;
  list: Statement;
  setPassword: Statement;
  setRole: Statement;
  idByName: Statement;
  deleteSessions: Statement;
  deleteUser: Statement;
}
const cache = new WeakMap<BetterSqlite3.Database, UserStatements>();

/** Prepared once per connection: the name lookup runs on every sign-in. */
function statements(db: BetterSqlite3.Database): UserStatements {
  let s = cache.get(db);
  if (!s) {
    s = {
      insert: db.prepare(
        `INSERT INTO users (name, role, password_hash, password_salt, created_at) VALUES (?, ?, ?, ?, ?)
         ON CONFLICT (name) DO NOTHING`,
      ),
      byName: db.prepare('SELECT * FROM users WHERE name = ?'),
      byId: db.prepare('SELECT * FROM users WHERE id = ?'),
      list: db.prepare('SELECT * FROM users ORDER BY name'),
      setPassword: db.prepare('UPDATE users SET password_hash = ?, password_salt = ? WHERE name = ?'),
      setRole: db.prepare('UPDATE users SET role = ? WHERE name = ?'),
      idByName: db.prepare('SELECT id FROM users WHERE name = ?'),
      deleteSessions: db.prepare('DELETE FROM web_sessions WHERE user_id = ?'),
      deleteUser: db.prepare('DELETE FROM users WHERE id = ?'),
    };
    cache.set(db, s);
  }
  return s;
}

/** Returns null when the name is taken. */
export function insertUser(db: BetterSqlite3.Database, user: NewUser): UserRecord | null {
  const result = statements(db).insert.run(user.name, user.role, user.passwordHash, user.passwordSalt, new Date(user.createdAt).toISOString());
  if (result.changes === 0) return null;
  return { id: Number(result.lastInsertRowid), ...user };
}

export function findUserByName(db: BetterSqlite3.Database, name: string): UserRecord | null {
  const row = statements(db).byName.get(name) as UserRow | undefined;
  return row ? fromRow(row) : null;
}

export function findUserById(db: BetterSqlite3.Database, id: number): UserRecord | null {
  const row = statements(db).byId.get(id) as UserRow | undefined;
  return row ? fromRow(row) : null;
}

export function listUsers(db: BetterSqlite3.Database): UserSummary[] {
  const rows = statements(db).list.all() as UserRow[];
  return rows.map((row) => {
    const { passwordHash: _h, passwordSalt: _s, ...summary } = fromRow(row);
    return summary;
  });
}

export function updateUserPassword(db: BetterSqlite3.Database, name: string, passwordHash: string, passwordSalt: string): boolean {
  return statements(db).setPassword.run(passwordHash, passwordSalt, name).changes > 0;
}

export function updateUserRole(db: BetterSqlite3.Database, name: string, role: UserRole): boolean {
  return statements(db).setRole.run(role, name).changes > 0;
}

/** Removes the user and every session of theirs (explicitly: foreign_keys may be off on this connection). */
export function deleteUser(db: BetterSqlite3.Database, name: string): boolean {
  const s = statements(db);
  return db.transaction(() => {
    const user = s.idByName.get(name) as { id: number } | undefined;
    if (!user) return false;
    s.deleteSessions.run(user.id);
    s.deleteUser.run(user.id);
    return true;
  })();
}

/**
 * Browser sessions (table `web_sessions`). Only a hash of the cookie's session id is stored. ISO 8601
 * UTC text from toISOString() has a fixed width, so text comparison orders it by time. A session ends
 * at `expires_at` (from sign-in) or when unused for the idle time, whichever comes first.
 */

export interface NewWebSession {
  idHash: string;
  userId: number;
  csrfToken: string;
  createdAt: number;
  expiresAt: number;
}

export interface WebSessionRecord {
  idHash: string;
  userId: number;
  userName: string;
  role: UserRole;
  csrfToken: string;
  createdAt: number;
  expiresAt: number;
  /** Last use (sign-in counts as a use). */
  lastSeenAt: number;
}

const iso = (ms: number) => new Date(ms).toISOString();

interface SessionStatements {
  insert: Statement;
  find: Statement;
  touch: Statement;
  remove: Statement;
  removeForUser: Statement;
  removeExpired: Statement;
}
const webSessionCache = new WeakMap<Database, SessionStatements>();

function webSessionStatements(db: Database): SessionStatements {
  let s = webSessionCache.get(db);
  if (!s) {
    s = {
      insert: db.prepare('INSERT INTO web_sessions (id_hash, user_id, csrf_token, created_at, expires_at, last_seen_at) VALUES (?, ?, ?, ?, ?, ?)'),
      find: db.prepare(
        `SELECT s.id_hash, s.user_id, u.name AS user_name, u.role, s.csrf_token, s.created_at, s.expires_at,
                coalesce(s.last_seen_at, s.created_at) AS last_seen_at
         FROM web_sessions s JOIN users u ON u.id = s.user_id
         WHERE s.id_hash = ? AND s.expires_at > ? AND coalesce(s.last_seen_at, s.created_at) > ?`,
      ),
      touch: db.prepare('UPDATE web_sessions SET last_seen_at = ? WHERE id_hash = ?'),
      remove: db.prepare('DELETE FROM web_sessions WHERE id_hash = ?'),
      removeForUser: db.prepare('DELETE FROM web_sessions WHERE user_id = ?'),
      removeExpired: db.prepare('DELETE FROM web_sessions WHERE expires_at <= ? OR coalesce(last_seen_at, created_at) <= ?'),
    };
    webSessionCache.set(db, s);
  }
  return s;
}

export function insertWebSession(db: Database, session: NewWebSession): void {
  webSessionStatements(db).insert.run(session.idHash, session.userId, session.csrfToken, iso(session.createdAt), iso(session.expiresAt), iso(session.createdAt));
}

/**
 * The live session with this id hash, joined with its user; null when unknown, expired, idle for
 * `idleMs` or longer, or the user is gone.
 */
export function findWebSession(db: Database, idHash: string, now: number, idleMs = Number.MAX_SAFE_INTEGER / 2): WebSessionRecord | null {
  const row = webSessionStatements(db).find.get(idHash, iso(now), iso(Math.max(0, now - idleMs))) as
    | { id_hash: string; user_id: number; user_name: string; role: UserRole; csrf_token: string; created_at: string; expires_at: string; last_seen_at: string }
    | undefined;
  if (!row) return null;
  return {
    idHash: row.id_hash,
    userId: row.user_id,
    userName: row.user_name,
    role: row.role,
    csrfToken: row.csrf_token,
    createdAt: Date.parse(row.created_at),
    expiresAt: Date.parse(row.expires_at),
    lastSeenAt: Date.parse(row.last_seen_at),
  };
}

/** Records a use of the session, restarting its idle time. */
export function touchWebSession(db: Database, idHash: string, at: number): void {
  webSessionStatements(db).touch.run(iso(at), idHash);
}

export function deleteWebSession(db: Database, idHash: string): boolean {
  return webSessionStatements(db).remove.run(idHash).changes > 0;
}

export function deleteWebSessionsForUser(db: Database, userId: number): number {
  return webSessionStatements(db).removeForUser.run(userId).changes;
}

/** Removes sessions past their end or idle for `idleMs`. */
export function deleteExpiredWebSessions(db: Database, now: number, idleMs = Number.MAX_SAFE_INTEGER / 2): number {
  return webSessionStatements(db).removeExpired.run(iso(now), iso(Math.max(0, now - idleMs))).changes;
}

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

const apiTokenFromRow = (row: TokenRow): ApiTokenSummary => ({
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
  /** This connection's own writes so far; reads no table, so it costs no read transaction. */
  ownWrites: Statement;
  /** Moves when another connection commits; asking starts a read transaction, the costly part of a lookup. */
  otherCommits: Statement;
  /** Live tokens found since either count last moved (only hits: a flood of bad tokens must not grow it). */
  live: Map<string, ApiTokenSummary>;
  liveAtOwnWrites: number;
  liveAtOtherCommits: number;
  /** When other connections' commits were last asked about (the caller's monotonic ms). */
  otherCommitsAskedAt: number;
}
const apiTokenCache = new WeakMap<BetterSqlite3.Database, TokenStatements>();

/** Prepared once per connection: the live-token lookup runs on every API request. */
function apiTokenStatements(db: BetterSqlite3.Database): TokenStatements {
  let s = apiTokenCache.get(db);
  if (!s) {
    s = {
      insert: db.prepare(`INSERT INTO api_tokens (name, token_hash, role, created_at) VALUES (?, ?, ?, ?) ON CONFLICT DO NOTHING`),
      findLive: db.prepare('SELECT id, name, role, created_at, revoked_at FROM api_tokens WHERE token_hash = ? AND revoked_at IS NULL'),
      findByName: db.prepare('SELECT id, name, role, created_at, revoked_at FROM api_tokens WHERE name = ?'),
      revoke: db.prepare('UPDATE api_tokens SET revoked_at = ? WHERE name = ? AND revoked_at IS NULL'),
      list: db.prepare('SELECT id, name, role, created_at, revoked_at FROM api_tokens ORDER BY name'),
      // total_changes() counts this connection's own writes (sqlite.org/lang_corefunc.html#total_changes);
      // data_version moves when another connection commits (sqlite.org/pragma.html#pragma_data_version).
      ownWrites: db.prepare('SELECT total_changes()').pluck(),
      otherCommits: db.prepare('PRAGMA data_version').pluck(),
      live: new Map(),
      liveAtOwnWrites: -1,
      liveAtOtherCommits: -1,
      otherCommitsAskedAt: Number.NEGATIVE_INFINITY,
    };
    apiTokenCache.set(db, s);
  }
  return s;
}

/** Returns null when the name is already used (by a live or a revoked token). */
export function insertApiToken(
  db: BetterSqlite3.Database,
  token: { name: string; tokenHash: string; role: UserRole; createdAt: number },
): ApiTokenSummary | null {
  const result = apiTokenStatements(db).insert.run(token.name, token.tokenHash, token.role, new Date(token.createdAt).toISOString());
  if (result.changes === 0) return null;
  return { id: Number(result.lastInsertRowid), name: token.name, role: token.role, createdAt: token.createdAt, revokedAt: null };
}

/**
 * How often a caller on a hot path lets the lookup ask about other connections' commits: at most once
 * every `everyMs` of its monotonic clock, `at` being now on that clock.
 */
export interface OtherCommitsCheck {
  at: number;
  everyMs: number;
}

/**
 * The live token with this hash, or null. Runs on every API request, so a token found is remembered
 * until anything at all is written to the database. A write on this connection (the API, the monitor,
 * any statement) is seen by the very next lookup. So is another process's commit (`pairwatch token
 * revoke` from the shell) — unless the caller passes `otherCommits`, which lets a lookup within
 * `everyMs` of the last one that asked skip the question, because asking costs a read transaction.
 */
export function findLiveApiTokenByHash(db: BetterSqlite3.Database, tokenHash: string, otherCommits?: OtherCommitsCheck): ApiTokenSummary | null {
  const s = apiTokenStatements(db);
  const ownWrites = s.ownWrites.get() as number;
  let otherCommitCount = s.liveAtOtherCommits;
  const due = !otherCommits || otherCommits.at < s.otherCommitsAskedAt || otherCommits.at - s.otherCommitsAskedAt >= otherCommits.everyMs;
  if (due) {
    otherCommitCount = s.otherCommits.get() as number;
    if (otherCommits) s.otherCommitsAskedAt = otherCommits.at;
  }
  if (ownWrites !== s.liveAtOwnWrites || otherCommitCount !== s.liveAtOtherCommits) {
    s.live.clear();
    s.liveAtOwnWrites = ownWrites;
    s.liveAtOtherCommits = otherCommitCount;
  }
  const known = s.live.get(tokenHash);
  if (known) return known;
  const row = s.findLive.get(tokenHash) as TokenRow | undefined;
  if (!row) return null;
  // Frozen: every request that presents this token shares the one object.
  const token = Object.freeze(apiTokenFromRow(row));
  if (s.live.size >= LIVE_TOKENS_REMEMBERED) s.live.clear();
  s.live.set(tokenHash, token);
  return token;
}

/** More live tokens than a site has in use at once; past it the memory starts afresh. */
const LIVE_TOKENS_REMEMBERED = 256;

export function findApiTokenByName(db: BetterSqlite3.Database, name: string): ApiTokenSummary | null {
  const row = apiTokenStatements(db).findByName.get(name) as TokenRow | undefined;
  return row ? apiTokenFromRow(row) : null;
}

/** False when no live token has this name. */
export function revokeApiToken(db: BetterSqlite3.Database, name: string, at: number): boolean {
  return (
    apiTokenStatements(db).revoke.run(new Date(at).toISOString(), name).changes > 0
  );
}

export function listApiTokens(db: BetterSqlite3.Database): ApiTokenSummary[] {
  return (apiTokenStatements(db).list.all() as TokenRow[]).map(apiTokenFromRow);
}

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
const loginFailureCache = new WeakMap<Database, LoginFailureStatements>();

function loginFailureStatements(db: Database): LoginFailureStatements {
  let s = loginFailureCache.get(db);
  if (!s) {
    s = {
      insert: db.prepare('INSERT INTO login_failures (name, ip, at) VALUES (?, ?, ?)'),
      remove: db.prepare('DELETE FROM login_failures WHERE id = ?'),
      countByIp: db.prepare('SELECT count(*) AS n FROM login_failures WHERE ip = ? AND at >= ?'),
      countByName: db.prepare('SELECT count(*) AS n FROM login_failures WHERE name = ? AND at >= ?'),
      list: db.prepare('SELECT name, ip, at FROM login_failures ORDER BY id DESC LIMIT ?'),
      prune: db.prepare('DELETE FROM login_failures WHERE at < ?'),
    };
    loginFailureCache.set(db, s);
  }
  return s;
}

/** Returns the row's id, so a reservation can be taken back. */
export function insertLoginFailure(db: Database, failure: { name: string | null; ip: string | null; at: number }): number {
  return Number(loginFailureStatements(db).insert.run(failure.name, failure.ip, new Date(failure.at).toISOString()).lastInsertRowid);
}

/** Takes back a reserved attempt (the password was right). */
export function deleteLoginFailure(db: Database, id: number): void {
  loginFailureStatements(db).remove.run(id);
}

/** Failures since `sinceAt` (inclusive) from this IP and for this name, counted separately. */
export function countLoginFailures(db: Database, query: { name: string | null; ip: string | null; sinceAt: number }): { byIp: number; byName: number } {
  const since = new Date(query.sinceAt).toISOString();
  const s = loginFailureStatements(db);
  const count = (statement: Statement, value: string | null) => (value === null ? 0 : (statement.get(value, since) as { n: number }).n);
  return { byIp: count(s.countByIp, query.ip), byName: count(s.countByName, query.name) };
}

export function listLoginFailures(db: Database, limit = 100): Array<{ name: string | null; ip: string | null; at: number }> {
  const rows = loginFailureStatements(db).list.all(limit) as Array<{ name: string | null; ip: string | null; at: string }>;
  return rows.map((row) => ({ name: row.name, ip: row.ip, at: Date.parse(row.at) }));
}

/** Keeps the table bounded under a long guessing attack. */
export function deleteLoginFailuresBefore(db: Database, before: number): number {
  return loginFailureStatements(db).prune.run(new Date(before).toISOString()).changes;
}
