import type { FastifyInstance, FastifyReply } from 'fastify';
import { countLoginFailures, deleteLoginFailure, deleteLoginFailuresBefore, insertLoginFailure, findUserByName, deleteExpiredWebSessions, deleteWebSession, insertWebSession } from '../../store/accountRepos.js';
import { formBody, formField } from '../http/formFields.js';
import { safeNextPath } from '../http/requestKind.js';
import { renderLoginPage } from '../pages/loginPage.js';
import { WebError } from '../webErrors.js';
import type { WebContext } from '../webContext.js';
import { sameSecret } from './csrfCheck.js';
import { decideLoginThrottle, LOGIN_WINDOW_MS } from './loginThrottle.js';
import { createPasswordCheckGate } from './passwordCheckGate.js';
import { makeDecoyHash, verifyPassword, type PasswordHash } from './passwordHash.js';
import { requireCsrf, requireRole, requireSameOrigin } from './requestAuth.js';
import { SESSION_COOKIE } from './resolvePrincipal.js';
import { randomSecret, sha256Hex } from './secretToken.js';

/** Pre-session cookie for the sign-in form's double-submit token (there is no session to hold one yet). */
export const LOGIN_FORM_COOKIE = 'pw_login';
const LOGIN_FORM_TTL_S = 3600;
const FAILURE_KEEP_MS = 90 * 86_400_000;
/** Concurrent scrypt checks (about 128 MiB each at the default cost) and how many may wait for one. */
export const PASSWORD_CHECKS_RUNNING = 2;
export const PASSWORD_CHECKS_WAITING = 16;
const BUSY_RETRY_S = 5;

export function registerAuthRoutes(app: FastifyInstance, ctx: WebContext): void {
  let decoy: Promise<PasswordHash> | null = null;
  const gate = createPasswordCheckGate({ running: PASSWORD_CHECKS_RUNNING, waiting: PASSWORD_CHECKS_WAITING });
  const cookieBase = { httpOnly: true, sameSite: 'strict' as const, secure: ctx.secureCookies };

  const showLogin = (reply: FastifyReply, status: number, next: string, name?: string, problem?: string) => {
    const formToken = randomSecret(24);
    reply.setCookie(LOGIN_FORM_COOKIE, formToken, { ...cookieBase, path: '/login', maxAge: LOGIN_FORM_TTL_S });
    return reply
      .code(status)
      .type('text/html; charset=utf-8')
      .send(renderLoginPage({ siteName: ctx.config.site.name, formToken, next, name, problem: problem ?? null }));
  };

  app.get('/login', async (request, reply) => {
    const next = safeNextPath((request.query as Record<string, unknown>).next);
    if (request.principal?.kind === 'session') return reply.redirect(next, 303);
    return showLogin(reply, 200, next);
  });

  app.post('/login', async (request, reply) => {
    requireSameOrigin(request, ctx);
    const body = formBody(request.body);
    const submitted = formField(body, 'csrf', 200);
    const expected = request.cookies[LOGIN_FORM_COOKIE];
    if (!submitted || !expected || !sameSecret(submitted, expected)) {
      throw new WebError('PW_WEB_CSRF', { reason: 'the sign-in form has expired' }, { field: 'csrf' });
    }
    const next = safeNextPath(formField(body, 'next', 500));
    const name = (formField(body, 'name', 80) ?? '').trim();
    const password = formField(body, 'password', 256) ?? '';
    if (name === '') return showLogin(reply, 400, next, name, 'name: is required');
    if (password === '') return showLogin(reply, 400, next, name, 'password: is required');

    const now = ctx.now();
    const ip = request.ip;
    const decision = decideLoginThrottle(
      countLoginFailures(ctx.db, { name, ip, sinceAt: now - LOGIN_WINDOW_MS }),
      ctx.config.web.login_attempts_per_minute,
    );
    if (!decision.allowed) {
      // Never the submitted name: people type passwords into the name field.
      ctx.log.warn({ ip }, 'sign-in refused: too many failed attempts');
      reply.header('retry-after', String(decision.retryAfterSeconds));
      return showLogin(reply, 429, next, name, new WebError('PW_WEB_RATE_LIMITED', { seconds: decision.retryAfterSeconds }).message);
    }
    // Counted before the hash runs (nothing awaited since the count), so parallel guesses see each other.
    const reservation = insertLoginFailure(ctx.db, { name, ip, at: now });

    const user = findUserByName(ctx.db, name);
    decoy ??= makeDecoyHash(ctx.scryptCost);
    const checking = gate.run(async () => {
      const stored = user ? { hash: user.passwordHash, salt: user.passwordSalt } : await decoy!;
      return verifyPassword(password, stored);
    });
    if (!checking) {
      deleteLoginFailure(ctx.db, reservation);
      ctx.log.warn({ ip }, 'sign-in turned away: too many password checks waiting');
      reply.header('retry-after', String(BUSY_RETRY_S));
      return showLogin(reply, 503, next, name, new WebError('PW_WEB_BUSY', { seconds: BUSY_RETRY_S }).message);
    }
    const ok = (await checking) && user !== null;
    if (!ok || !user) {
      deleteLoginFailuresBefore(ctx.db, now - FAILURE_KEEP_MS);
      ctx.log.warn({ ip, knownName: user !== null }, 'sign-in failed');
      return showLogin(reply, 401, next, name, new WebError('PW_WEB_BAD_LOGIN').message);
    }
    deleteLoginFailure(ctx.db, reservation);

    const sessionId = randomSecret(32);
    const ttl = ctx.config.web.session_ttl;
    insertWebSession(ctx.db, { idHash: sha256Hex(sessionId), userId: user.id, csrfToken: randomSecret(32), createdAt: now, expiresAt: now + ttl });
    deleteExpiredWebSessions(ctx.db, now, ctx.config.web.session_idle);
    ctx.log.info({ name, ip }, 'signed in');
    reply.clearCookie(LOGIN_FORM_COOKIE, { ...cookieBase, path: '/login' });
    reply.setCookie(SESSION_COOKIE, sessionId, { ...cookieBase, path: '/', maxAge: Math.floor(ttl / 1000) });
    return reply.redirect(next, 303);
  });

  app.post('/logout', async (request, reply) => {
    const principal = requireRole(request, 'viewer');
    requireCsrf(request, ctx, principal, formField(formBody(request.body), 'csrf', 200));
    if (principal.sessionIdHash) deleteWebSession(ctx.db, principal.sessionIdHash);
    reply.clearCookie(SESSION_COOKIE, { ...cookieBase, path: '/' });
    return reply.redirect('/login', 303);
  });
}
