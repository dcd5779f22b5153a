import { readFileSync } from 'node:fs';
import type BetterSqlite3 from 'better-sqlite3';
import fastifyCookie from '@fastify/cookie';
import fastifyFormbody from '@fastify/formbody';
import Fastify, { LogController, type FastifyError, type FastifyInstance, type FastifyReply, type FastifyRequest } from 'fastify';
import type { Logger } from 'pino';
import type { SiteConfig } from '../config/schema.js';
import type { AckLinkPort } from './ackLink/ackLinkPort.js';
import { registerAckLinkRoutes } from './ackLink/ackLinkRoutes.js';
import { createAckLinks } from './ackLink/createAckLinks.js';
import { registerApiRoutes } from './api/apiRoutes.js';
import { registerHealthRoute } from './api/healthRoute.js';
import { registerAuthRoutes } from './auth/authRoutes.js';
import { DEFAULT_SCRYPT_COST, type ScryptCost } from './auth/passwordHash.js';
import { resolvePrincipal, SESSION_COOKIE } from './auth/resolvePrincipal.js';
import './auth/requestAuth.js';
import { frameworkErrorHandler, installErrorHandling } from './http/errorHandling.js';
import { securityHeaders } from './http/securityHeaders.js';
import { registerLiveStreamRoute } from './live/liveStreamRoute.js';
import { registerPageRoutes } from './pages/pageRoutes.js';
import { registerStaticRoutes } from './static/staticRoutes.js';
import { WebError } from './webErrors.js';
import type { WebContext, WebLogger } from './webContext.js';
import type { WebCommands, WebLiveFeed, WebReadModel } from './webPorts.js';

export interface WebServerOptions {
  config: SiteConfig;
  /** better-sqlite3 connection holding users, sessions, API tokens and spent acknowledge links. */
  db: BetterSqlite3.Database;
  read: WebReadModel;
  commands: WebCommands;
  live: WebLiveFeed;
  /** Key that signs acknowledge links (the notify module's ack secret). */
  ackSecret: Buffer;
  now: () => number;
  logger?: Logger;
  /** Optional: replaces the acknowledge-link checks (tests). Default: signed tokens spent in the store. */
  ackLinks?: AckLinkPort;
  /** Optional: scrypt cost for the decoy hash used on unknown names; match the cost users were created with. */
  scryptCost?: ScryptCost;
}

const BODY_LIMIT = 65_536;
const SILENT_LOG: WebLogger = { info() {}, warn() {}, error() {} };

function readTlsFile(field: string, file: string): Buffer {
  try {
    return readFileSync(file);
  } catch (err) {
    throw new WebError('PW_WEB_TLS_UNREADABLE', { field, file, reason: (err as NodeJS.ErrnoException).code ?? (err as Error).message }, { field });
  }
}

/**
 * The web server: REST API, pages, acknowledge links and the live stream, on one fastify instance.
 * Not listening yet: the daemon calls `listen` (and logs `webListenWarnings`).
 */
export function buildWebServer(options: WebServerOptions): FastifyInstance {
  const { config } = options;
  const tls = config.web.tls
    ? { cert: readTlsFile('web.tls.cert', config.web.tls.cert), key: readTlsFile('web.tls.key', config.web.tls.key) }
    : null;
  const publicUrl = config.web.public_url ? new URL(config.web.public_url) : null;

  // Errors fastify raises before routing (a broken %-escape, an over-long path parameter) must get our
  // error shape too, and must not echo the URL back; the handler is bound once ctx exists.
  let answerFrameworkError: (error: FastifyError, request: FastifyRequest, reply: FastifyReply) => void = (_e, _q, reply) => {
    reply.code(400).send();
  };
  const common = {
    bodyLimit: BODY_LIMIT,
    loggerInstance: options.logger,
    logController: new LogController({ disableRequestLogging: true }),
    return503OnClosing: true,
    frameworkErrors: (error: FastifyError, request: FastifyRequest, reply: FastifyReply) => answerFrameworkError(error, request, reply),
  };
  const app = (tls ? Fastify({ https: tls, ...common }) : Fastify(common)) as unknown as FastifyInstance;

  const ctx: WebContext = {
    config,
    db: options.db,
    read: options.read,
    commands: options.commands,
    live: options.live,
    ackLinks: options.ackLinks ?? createAckLinks(options.db, options.ackSecret),
    now: options.now,
    log: options.logger ?? SILENT_LOG,
    tls: tls !== null,
    secureCookies: tls !== null || publicUrl?.protocol === 'https:',
    scryptCost: options.scryptCost ?? DEFAULT_SCRYPT_COST,
    extraOrigins: publicUrl ? [publicUrl.origin.toLowerCase()] : [],
  };
  const headers = securityHeaders({ tls: ctx.tls });

  app.register(fastifyCookie);
  app.register(fastifyFormbody, { bodyLimit: BODY_LIMIT });

  // An empty JSON body means "no fields" (POST /ack with nothing to say), not a parse error.
  // JSON and forms only: a text/plain body is answered 415 rather than half-understood.
  app.removeContentTypeParser(['application/json', 'text/plain']);
  app.addContentTypeParser('application/json', { parseAs: 'string', bodyLimit: BODY_LIMIT }, (_request, body, done) => {
    const text = typeof body === 'string' ? body : body.toString('utf8');
    if (text.trim() === '') return done(null, undefined);
    try {
      done(null, JSON.parse(text, (key, value: unknown) => (key === '__proto__' || key === 'constructor' ? undefined : value)));
    } catch (err) {
      done(new WebError('PW_WEB_BAD_JSON', { reason: (err as Error).message }, { field: 'body' }), undefined);
    }
  });

  app.decorateRequest('principal', null);
  app.decorateRequest('badCredentials', false);
  app.addHook('onRequest', async (_request, reply) => {
    reply.headers(headers);
    reply.header('cache-control', 'no-store');
  });

  installErrorHandling(app, ctx);
  answerFrameworkError = frameworkErrorHandler(ctx);
  app.register(async (scope) => {
    // Inside this scope so it runs after the cookie plugin's own onRequest hook has parsed cookies.
    scope.addHook('onRequest', async (request) => {
      const lookup = resolvePrincipal(ctx.db, request.headers.authorization, request.cookies[SESSION_COOKIE], ctx.now());
      request.principal = lookup.kind === 'found' ? lookup.principal : null;
      request.badCredentials = lookup.kind === 'bad-token';
    });
    registerStaticRoutes(scope);
    registerHealthRoute(scope, ctx);
    registerAuthRoutes(scope, ctx);
    registerApiRoutes(scope, ctx);
    registerPageRoutes(scope, ctx);
    registerAckLinkRoutes(scope, ctx);
    registerLiveStreamRoute(scope, ctx, headers);
  });
  return app;
}
