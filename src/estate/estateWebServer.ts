import type BetterSqlite3 from 'better-sqlite3';
import fastifyCookie from '@fastify/cookie';
import fastifyFormbody from '@fastify/formbody';
import Fastify, { LogController, type FastifyInstance } from 'fastify';
import type { Logger } from 'pino';
import type { SiteConfig } from '../config/schema.js';
import { registerAuthRoutes } from '../web/auth/authRoutes.js';
import { DEFAULT_SCRYPT_COST } from '../web/auth/passwordHash.js';
import { requireRole } from '../web/auth/requestAuth.js';
import { resolvePrincipal, SESSION_COOKIE } from '../web/auth/resolvePrincipal.js';
import { installErrorHandling } from '../web/http/errorHandling.js';
import { securityHeaders } from '../web/http/securityHeaders.js';
import { registerStaticRoutes } from '../web/static/staticRoutes.js';
import { notFound } from '../web/webErrors.js';
import type { WebContext } from '../web/webContext.js';
import type { EstateConfig } from './estateConfigSchema.js';
import { renderEstateBoard, renderEstateEvents, renderEstateSite, type EstateView } from './estatePages.js';
import type { EventPayload } from '../mqtt/sitePayloads.js';

export interface EstateWebOptions {
  config: EstateConfig;
  db: BetterSqlite3.Database;
  view: () => EstateView;
  recentEvents: () => ReadonlyArray<{ siteId: string; event: EventPayload }>;
  now: () => number;
  logger?: Logger;
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
    registerAuthRoutes(scope, ctx);
    scope.get('/', async (request, reply) => {
      const principal = requireRole(request, 'viewer');
      return reply.type('text/html; charset=utf-8').send(renderEstateBoard(options.view(), principal));
    });
    scope.get('/sites/:id', async (request, reply) => {
      const principal = requireRole(request, 'viewer');
      const id = String((request.params as { id?: unknown }).id ?? '');
      const page = SITE_ID.test(id) ? renderEstateSite(options.view(), id, principal) : null;
      if (!page) throw notFound('site', id);
      return reply.type('text/html; charset=utf-8').send(page);
    });
    scope.get('/history', async (request, reply) => {
      const principal = requireRole(request, 'viewer');
      return reply.type('text/html; charset=utf-8').send(renderEstateEvents(options.view(), options.recentEvents(), principal));
    });
  });
  return app;
}
