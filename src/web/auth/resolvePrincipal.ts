import type BetterSqlite3 from 'better-sqlite3';
import { findLiveApiTokenByHash, findWebSession, touchWebSession, type ApiTokenSummary } from '../../store/accountRepos.js';
import type { Principal } from './principal.js';
import { tokenActor } from './accountName.js';
import { sha256Hex } from './secretToken.js';

export const SESSION_COOKIE = 'pw_session';
/** A session's last use is written at most this often, so a busy board does not write on every request. */
const TOUCH_EVERY_MS = 60_000;
/**
 * Under load, other processes' commits (a revoke from the shell) are asked about at most this often:
 * asking costs a read transaction, which was the largest part of an API request's own CPU. A revoke
 * from another process therefore holds for every request that arrives 1 ms or more after its commit.
 */
export const OTHER_COMMITS_EVERY_MS = 1;

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
  /** A monotonic clock's ms (performance.now()); without it every lookup asks about other processes' commits. */
  monotonicMs?: number,
): PrincipalLookup {
  if (authorization !== undefined && authorization.trim() !== '') {
    const match = /^Bearer\s+(\S+)\s*$/i.exec(authorization);
    if (!match) return { kind: 'bad-token' };
    const token = findLiveApiTokenByHash(
      db,
      hashOfBearer(match[1]!),
      monotonicMs === undefined ? undefined : { at: monotonicMs, everyMs: OTHER_COMMITS_EVERY_MS },
    );
    if (!token) return { kind: 'bad-token' };
    return tokenLookup(token);
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

/**
 * One frozen answer per remembered token: the repo hands back the same token object until anything is
 * written, so a polling script costs no new objects per request.
 */
const lookupOfToken = new WeakMap<ApiTokenSummary, PrincipalLookup>();

function tokenLookup(token: ApiTokenSummary): PrincipalLookup {
  let lookup = lookupOfToken.get(token);
  if (!lookup) {
    const principal: Principal = Object.freeze({ kind: 'token', name: tokenActor(token.name), role: token.role, csrfToken: null, sessionIdHash: null });
    lookup = Object.freeze({ kind: 'found', principal });
    lookupOfToken.set(token, lookup);
  }
  return lookup;
}

/**
 * The last Bearer secret and its hash: a polling script sends the same token on every request, and
 * hashing it again was a visible share of a request's CPU. One entry only, so the process holds no
 * more secrets than the last request brought in anyway.
 */
let lastBearer = '';
let lastBearerHash = '';

function hashOfBearer(secret: string): string {
  if (secret !== lastBearer) {
    lastBearerHash = sha256Hex(secret);
    lastBearer = secret;
  }
  return lastBearerHash;
}
