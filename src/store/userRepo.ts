import type BetterSqlite3 from 'better-sqlite3';
import type { Statement } from 'better-sqlite3';

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
