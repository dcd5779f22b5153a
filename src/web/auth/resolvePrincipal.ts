import type BetterSqlite3 from 'better-sqlite3';
import { findLiveApiTokenByHash, findWebSession, touchWebSession } from '../../store/accountRepos.js';
import type { Principal } from './principal.js';
import { tokenActor } from './accountName.js';
import { sha256Hex } from './secretToken.js';

export const SESSION_COOKIE = 'pw_session';
/** A session's last use is written at most this often, so a busy board does not write on every request. */
const TOUCH_EVERY_MS = 60_000;

export type PrincipalLookup =
  | { kind: 'none' }
  | { kind: 'found'; principal: Principal }
  /** Credentials were sent but are no good: answered with 401 rather than treated as anonymous. */
  | { kind: 'bad-token' };

/**
 * A Bearer header wins over a cookie: a script that sends a token means that token. A stale session
 * cookie is the same as none (the browser is sent to the sign-in page), and so is one unused for
 * `sessionIdleMs`; a session in use has its idle time restarted.
 */
export function resolvePrincipal(
  db: BetterSqlite3.Database,
  authorization: string | undefined,
  sessionCookie: string | undefined,
  now: number,
  sessionIdleMs?: number,
): PrincipalLookup {
  if (authorization !== undefined && authorization.trim() !== '') {
    const match = /^Bearer\s+(\S+)\s*$/i.exec(authorization);
    if (!match) return { kind: 'bad-token' };
    const token = findLiveApiTokenByHash(db, sha256Hex(match[1]!));
    if (!token) return { kind: 'bad-token' };
    return { kind: 'found', principal: { kind: 'token', name: tokenActor(token.name), role: token.role, csrfToken: null, sessionIdHash: null } };
  }
  if (sessionCookie) {
    const idHash = sha256Hex(sessionCookie);
    const session = findWebSession(db, idHash, now, sessionIdleMs);
    if (session) {
      if (now - session.lastSeenAt >= TOUCH_EVERY_MS) touchWebSession(db, idHash, now);
      return {
        kind: 'found',
        principal: { kind: 'session', name: session.userName, role: session.role, csrfToken: session.csrfToken, sessionIdHash: idHash },
      };
    }
  }
  return { kind: 'none' };
}
