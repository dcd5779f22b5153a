import type { Database, Statement } from 'better-sqlite3';
import type { UserRole } from './userRepo.js';

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
const cache = new WeakMap<Database, SessionStatements>();

function statements(db: Database): SessionStatements {
  let s = cache.get(db);
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
    cache.set(db, s);
  }
  return s;
}

export function insertWebSession(db: Database, session: NewWebSession): void {
  statements(db).insert.run(session.idHash, session.userId, session.csrfToken, iso(session.createdAt), iso(session.expiresAt), iso(session.createdAt));
}

/**
 * The live session with this id hash, joined with its user; null when unknown, expired, idle for
 * `idleMs` or longer, or the user is gone.
 */
export function findWebSession(db: Database, idHash: string, now: number, idleMs = Number.MAX_SAFE_INTEGER / 2): WebSessionRecord | null {
  const row = statements(db).find.get(idHash, iso(now), iso(Math.max(0, now - idleMs))) as
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
  statements(db).touch.run(iso(at), idHash);
}

export function deleteWebSession(db: Database, idHash: string): boolean {
  return statements(db).remove.run(idHash).changes > 0;
}

export function deleteWebSessionsForUser(db: Database, userId: number): number {
  return statements(db).removeForUser.run(userId).changes;
}

/** Removes sessions past their end or idle for `idleMs`. */
export function deleteExpiredWebSessions(db: Database, now: number, idleMs = Number.MAX_SAFE_INTEGER / 2): number {
  return statements(db).removeExpired.run(iso(now), iso(Math.max(0, now - idleMs))).changes;
}
