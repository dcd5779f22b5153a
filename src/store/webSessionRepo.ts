import type BetterSqlite3 from 'better-sqlite3';
import type { UserRole } from './userRepo.js';

/**
 * Browser sessions (table `web_sessions`). Only a hash of the cookie's session id is stored. ISO 8601
 * UTC text from toISOString() has a fixed width, so text comparison orders it by time.
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
}

const iso = (ms: number) => new Date(ms).toISOString();

export function insertWebSession(db: BetterSqlite3.Database, session: NewWebSession): void {
  db.prepare('INSERT INTO web_sessions (id_hash, user_id, csrf_token, created_at, expires_at) VALUES (?, ?, ?, ?, ?)').run(
    session.idHash,
    session.userId,
    session.csrfToken,
    iso(session.createdAt),
    iso(session.expiresAt),
  );
}

/** The live session with this id hash, joined with its user; null when unknown, expired or the user is gone. */
export function findWebSession(db: BetterSqlite3.Database, idHash: string, now: number): WebSessionRecord | null {
  const row = db
    .prepare(
      `SELECT s.id_hash, s.user_id, u.name AS user_name, u.role, s.csrf_token, s.created_at, s.expires_at
       FROM web_sessions s JOIN users u ON u.id = s.user_id
       WHERE s.id_hash = ? AND s.expires_at > ?`,
    )
    .get(idHash, iso(now)) as
    | { id_hash: string; user_id: number; user_name: string; role: UserRole; csrf_token: string; created_at: string; expires_at: string }
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
  };
}

export function deleteWebSession(db: BetterSqlite3.Database, idHash: string): boolean {
  return db.prepare('DELETE FROM web_sessions WHERE id_hash = ?').run(idHash).changes > 0;
}

export function deleteWebSessionsForUser(db: BetterSqlite3.Database, userId: number): number {
  return db.prepare('DELETE FROM web_sessions WHERE user_id = ?').run(userId).changes;
}

export function deleteExpiredWebSessions(db: BetterSqlite3.Database, now: number): number {
  return db.prepare('DELETE FROM web_sessions WHERE expires_at <= ?').run(iso(now)).changes;
}
