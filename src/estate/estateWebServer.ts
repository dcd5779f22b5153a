import type BetterSqlite3 from 'better-sqlite3';
import fastifyCookie from '@fastify/cookie';
import fastifyFormbody from '@fastify/formbody';
import Fastify, { LogController, type FastifyInstance } from 'fastify';
import type { Logger } from 'pino';
import type { SiteConfig } from '../config/schema.js';
import { registerAuthRoutes } from '../web/auth/authRoutes.js';
import { DEFAULT_SCRYPT_COST } from '../web/auth/passwordHash.js';
import { requireCsrf, requireRole } from '../web/auth/requestAuth.js';
import { formBody, formField } from '../web/http/formFields.js';
import { resolvePrincipal, SESSION_COOKIE } from '../web/auth/resolvePrincipal.js';
import { installErrorHandling } from '../web/http/errorHandling.js';
import { securityHeaders } from '../web/http/securityHeaders.js';
import { registerStaticRoutes } from '../web/static/staticRoutes.js';
import { notFound, WebError } from '../web/webErrors.js';
import type { WebContext } from '../web/webContext.js';
import type { EstateConfig } from './estateConfigSchema.js';
import type { CommandOutcome } from './estateCommands.js';
import { renderEstateBoard, renderEstateBoardList, renderEstateEvents, renderEstateSite, renderEstateSiteDetail, type EstateView } from './estatePages.js';
import { ESTATE_SCRIPT } from './estateScript.js';
import type { EventPayload } from '../mqtt/sitePayloads.js';

export interface EstateWebOptions {
  config: EstateConfig;
  db: BetterSqlite3.Database;
  view: () => EstateView;
  recentEvents: () => ReadonlyArray<{ siteId: string; event: EventPayload }>;
  now: () => number;
  logger?: Logger;
  /** Sends an acknowledgement to a site over its command topic and waits for its answer. */
  acknowledge?: (siteId: string, alarmId: number, note: string | null) => Promise<CommandOutcome>;
}

const SITE_ID = /^[a-z0-9][a-z0-9_-]{0,39}$/;

/**
 * The estate's web server: the site's sign-in, sessions, API tokens, error pages, static files and
 * security headers (src/web, reused as they are), with the estate's own read-only pages.
 */
export function buildEstateWebServer(options: EstateWebOptions): FastifyInstance {
  const { config } = options;
  const publicUrl = config.web.public_url ? new URL(config.web.public_url) : null;
  const app = Fastify({ bodyLimit: 65_536, loggerInstance: options.logger, logController: new LogController({ disableRequestLogging: true }), return503OnClosing: true }) as unknown as FastifyInstance;
  // The shared auth and error routes read only site.name and web.* from the config, and db, now, log,
  // cookies and origins from the context; the estate has no loops, commands or live feed to lend them.
  const siteShaped = { site: { name: config.estate.name, timezone: config.estate.timezone }, web: config.web } as unknown as SiteConfig;
  const ctx = {
    config: siteShaped,
    db: options.db,
    now: options.now,
    log: options.logger ?? { info() {}, warn() {}, error() {} },
    tls: false,
    secureCookies: publicUrl?.protocol === 'https:',
    scryptCost: DEFAULT_SCRYPT_COST,
    extraOrigins: publicUrl ? [publicUrl.origin.toLowerCase()] : [],
  } as unknown as WebContext;
  const headers = securityHeaders({ tls: false });
  app.register(fastifyCookie);
  app.register(fastifyFormbody, { bodyLimit: 65_536 });
  app.decorateRequest('principal', null);
  app.decorateRequest('badCredentials', false);
  app.addHook('onRequest', async (_request, reply) => {
    reply.headers(headers);
    reply.header('cache-control', 'no-store');
  });
  installErrorHandling(app, ctx);
  app.register(async (scope) => {
    scope.addHook('onRequest', async (request) => {
      const lookup = resolvePrincipal(ctx.db, request.headers.authorization, request.cookies[SESSION_COOKIE], ctx.now());
      request.principal = lookup.kind === 'found' ? lookup.principal : null;
      request.badCredentials = lookup.kind === 'bad-token';
    });
    registerStaticRoutes(scope);
    scope.get('/static/estate.js', async (_request, reply) => reply.header('cache-control', 'no-cache').type('text/javascript; charset=utf-8').send(ESTATE_SCRIPT));
    registerAuthRoutes(scope, ctx);
    scope.get('/', async (request, reply) => {
      const principal = requireRole(request, 'viewer');
      return reply.type('text/html; charset=utf-8').send(renderEstateBoard(options.view(), principal));
    });
    scope.get('/sites/:id', async (request, reply) => {
      const principal = requireRole(request, 'viewer');
      const id = String((request.params as { id?: unknown }).id ?? '');
      const acked = Number((request.query as { acked?: unknown }).acked);
      const page = SITE_ID.test(id) ? renderEstateSite(options.view(), id, principal, Number.isSafeInteger(acked) && acked > 0 ? acked : null) : null;
      if (!page) throw notFound('site', id);
      return reply.type('text/html; charset=utf-8').send(page);
    });
    // Fragments the board's script swaps in, so the pages stay current without a reload.
    scope.get('/fragments/board', async (request, reply) => {
      requireRole(request, 'viewer');
      return reply.type('text/html; charset=utf-8').send(renderEstateBoardList(options.view()));
    });
    scope.get('/fragments/sites/:id', async (request, reply) => {
      const principal = requireRole(request, 'viewer');
      const id = String((request.params as { id?: unknown }).id ?? '');
      const part = SITE_ID.test(id) ? renderEstateSiteDetail(options.view(), id, principal) : null;
      if (!part) throw notFound('site', id);
      return reply.type('text/html; charset=utf-8').send(part);
    });
    scope.post('/sites/:id/alarms/:alarmId/ack', async (request, reply) => {
      const principal = requireRole(request, 'operator');
      const body = formBody(request.body);
      requireCsrf(request, ctx, principal, formField(body, 'csrf', 200));
      const params = request.params as { id?: unknown; alarmId?: unknown };
      const id = String(params.id ?? '');
      const site = SITE_ID.test(id) ? options.view().sites.find((s) => s.seen.siteId === id) : undefined;
      if (!site) throw notFound('site', id);
      const alarmId = Number(params.alarmId);
      if (!Number.isSafeInteger(alarmId) || alarmId < 1) throw new WebError('PW_WEB_BAD_INPUT', { field: 'alarmId', reason: 'must be a whole number of at least 1' });
      if (!site.canAct || !options.acknowledge) throw new WebError('PW_WEB_BAD_ACTION', { reason: `this board holds no command token for ${site.name}; acknowledge on its own pages` });
      const typed = formField(body, 'note', 1000)?.replace(/[\r\n\u2028\u2029]+/g, ' ').trim();
      // The site audits the token's name; the note says which estate user asked.
      const note = `${typed ? `${typed} ` : ''}(from the estate board, by ${principal.name})`;
      const outcome = await options.acknowledge(id, alarmId, note);
      if (!outcome.ok) throw new WebError('PW_WEB_BAD_ACTION', { reason: `${site.name} did not acknowledge alarm ${alarmId}: ${outcome.message} (${outcome.code})` });
      return reply.redirect(`/sites/${encodeURIComponent(id)}?acked=${alarmId}`, 303);
    });
    scope.get('/history', async (request, reply) => {
      const principal = requireRole(request, 'viewer');
      return reply.type('text/html; charset=utf-8').send(renderEstateEvents(options.view(), options.recentEvents(), principal));
    });
  });
  return app;
}
