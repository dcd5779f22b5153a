import type { FastifyRequest } from 'fastify';
import type { UserRole } from '../../store/accountRepos.js';
import { WebError } from '../webErrors.js';
import type { WebContext } from '../webContext.js';
import { csrfProblem, originProblem } from './csrfCheck.js';
import type { Principal } from './principal.js';
import { roleAllows } from './roles.js';

declare module 'fastify' {
  interface FastifyRequest {
    /** Set by the auth hook before any handler runs. */
    principal: Principal | null;
    /** Credentials were sent but refused (unknown or revoked API token). */
    badCredentials: boolean;
  }
}

/** The caller, who must hold at least `needed`; 401 without credentials, 403 with too low a role. */
export function requireRole(request: FastifyRequest, needed: UserRole): Principal {
  const principal = request.principal;
  if (!principal) {
    if (request.badCredentials) throw new WebError('PW_WEB_BAD_TOKEN', {}, { field: 'authorization', headers: { 'www-authenticate': 'Bearer error="invalid_token"' } });
    throw new WebError('PW_WEB_UNAUTHENTICATED', {}, { headers: { 'www-authenticate': 'Bearer' } });
  }
  if (!roleAllows(principal.role, needed)) {
    throw new WebError('PW_WEB_FORBIDDEN', { needed, who: principal.name, role: principal.role });
  }
  return principal;
}

function header(request: FastifyRequest, name: string): string | undefined {
  const value = request.headers[name];
  return Array.isArray(value) ? value[0] : value;
}

export function allowedOrigins(request: FastifyRequest, ctx: WebContext): string[] {
  const own = `${request.protocol}://${request.host}`.toLowerCase();
  return [own, ...ctx.extraOrigins];
}

/**
 * State-changing requests from a browser session must carry the session's form token. API tokens are
 * exempt: a browser never attaches them by itself, so a forged cross-site request cannot carry one.
 */
export function requireCsrf(request: FastifyRequest, ctx: WebContext, principal: Principal, submitted: string | undefined): void {
  if (principal.kind !== 'session') return;
  const problem = csrfProblem({
    origin: header(request, 'origin'),
    secFetchSite: header(request, 'sec-fetch-site'),
    allowedOrigins: allowedOrigins(request, ctx),
    expectedToken: principal.csrfToken,
    submittedToken: submitted ?? header(request, 'x-csrf-token'),
  });
  if (problem) throw new WebError('PW_WEB_CSRF', { reason: problem }, { field: 'csrf' });
}

export function requireSameOrigin(request: FastifyRequest, ctx: WebContext): void {
  const problem = originProblem({
    origin: header(request, 'origin'),
    secFetchSite: header(request, 'sec-fetch-site'),
    allowedOrigins: allowedOrigins(request, ctx),
  });
  if (problem) throw new WebError('PW_WEB_CSRF', { reason: problem }, { field: 'origin' });
}
