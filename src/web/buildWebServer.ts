import { readFileSync } from 'node:fs';
import type { Server } from 'node:http';
import type BetterSqlite3 from 'better-sqlite3';
import fastifyCookie from '@fastify/cookie';
import fastifyFormbody from '@fastify/formbody';
import Fastify, { LogController, type FastifyBaseLogger, type FastifyError, type FastifyInstance, type FastifyReply, type FastifyRequest } from 'fastify';
import type { Logger } from 'pino';
import type { SiteConfig } from '../config/schema.js';
import type { AckLinkPort } from './ackLink/ackLinkPort.js';
import { registerAckLinkRoutes } from './ackLink/ackLinkRoutes.js';
import { createAckLinks } from './ackLink/createAckLinks.js';
import { registerApiRoutes } from './api/apiRoutes.js';
import { registerHealthRoute } from './api/healthRoute.js';
import { registerMetricsRoute, type MetricsSource } from './api/metricsRoute.js';
import { registerAuthRoutes } from './auth/authRoutes.js';
import { DEFAULT_SCRYPT_COST, type ScryptCost } from './auth/passwordHash.js';
import { resolvePrincipal, SESSION_COOKIE } from './auth/resolvePrincipal.js';
import './auth/requestAuth.js';
import { frameworkErrorHandler, installErrorHandling } from './http/errorHandling.js';
import { allowedHostNames, hostAllowed, hostNameOf } from './http/hostCheck.js';
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
  /** Optional: a monotonic clock in ms; default performance.now (tests move their own). */
  monotonicNow?: () => number;
  logger?: Logger;
  /** Optional: replaces the acknowledge-link checks (tests). Default: signed tokens spent in the store. */
  ackLinks?: AckLinkPort;
  /** Optional: scrypt cost for the decoy hash used on unknown names; match the cost users were created with. */
  scryptCost?: ScryptCost;
  /** Serves /metrics (loopback only, or with web.metrics_token) when given. */
  metrics?: MetricsSource;
  /** The process's open-file limit; default read from /proc/self/limits. Tests pass one in. */
  openFileLimit?: number | null;
}

const BODY_LIMIT = 65_536;
/** Idle keep-alive sockets hold a file each; browsers reopen cheaply. */
const KEEP_ALIVE_MS = 10_000;
/** Files kept free for everything but the web side: the database and its WAL, mail, decoder links, backups. */
const FILES_KEPT_FOR_THE_REST = 64;

/** The soft "Max open files" limit (Linux proc(5)), or null where it cannot be read. */
export function readOpenFileLimit(): number | null {
  try {
    const line = /^Max open files\s+(\d+|unlimited)/m.exec(readFileSync('/proc/self/limits', 'utf8'));
    return line && line[1] !== 'unlimited' ? Number(line[1]) : null;
  } catch {
    return null;
  }
}

/**
 * The web connection cap: web.max_connections, but never so many that web sockets alone can take the
 * files the alarm path needs (a flood of half-sent requests must not stop alarm mail with EMFILE).
 */
export function webConnectionCap(configured: number, openFileLimit: number | null): number {
  if (openFileLimit === null) return configured;
  return Math.max(1, Math.min(configured, openFileLimit - FILES_KEPT_FOR_THE_REST));
}
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
  const requestTimeout = config.web.request_timeout;
  // Node looks for overdue requests every connectionsCheckingInterval (default 30 s); look often enough
  // that a short request_timeout is kept, and give headers no longer than the whole request.
  const nodeHttp = {
    connectionsCheckingInterval: Math.max(250, Math.min(30_000, Math.floor(requestTimeout / 2))),
    headersTimeout: requestTimeout,
    requestTimeout,
  };
  const common = {
    http: nodeHttp,
    bodyLimit: BODY_LIMIT,
    // A request whose headers or body never finish is dropped (fastify's default is to wait for ever);
    // a socket silent for twice that is closed too. The live stream writes every 20 s, well within it.
    requestTimeout,
    connectionTimeout: requestTimeout * 2,
    keepAliveTimeout: Math.min(KEEP_ALIVE_MS, requestTimeout),
    loggerInstance: options.logger,
    logController: new LogController({ disableRequestLogging: true }),
    // No route logs through request.log (they log through ctx.log, with their own fields), so the
    // per-request child logger fastify makes by default would cost about 1 µs a request for nothing.
    childLoggerFactory: (logger: FastifyBaseLogger) => logger,
    return503OnClosing: true,
    frameworkErrors: (error: FastifyError, request: FastifyRequest, reply: FastifyReply) => answerFrameworkError(error, request, reply),
  };
  const app = (tls ? Fastify({ https: { ...tls, ...nodeHttp }, ...common }) : Fastify(common)) as unknown as FastifyInstance;
  // Node closes connections past this at once, before they hold a file for a request timeout.
  (app.server as Server).maxConnections = webConnectionCap(
    config.web.max_connections,
    options.openFileLimit === undefined ? readOpenFileLimit() : options.openFileLimit,
  );
  const allowedHosts = allowedHostNames(config.web.listen, config.web.public_url, config.web.allowed_hosts);

  const ctx: WebContext = {
    config,
    db: options.db,
    read: options.read,
    commands: options.commands,
    live: options.live,
    ackLinks: options.ackLinks ?? createAckLinks(options.db, options.ackSecret),
    now: options.now,
    monotonicNow: options.monotonicNow ?? (() => performance.now()),
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
  // Both onRequest hooks take a callback rather than return a promise: they run on every request and
  // do nothing asynchronous.
  app.addHook('onRequest', (request, reply, done) => {
    reply.headers(headers);
    reply.header('cache-control', 'no-store');
    // Before anything reads the request: the server's own origin is taken from Host.
    const host = request.headers.host;
    if (!hostAllowed(host, allowedHosts)) {
      // Plain, with nothing of the site in it: a rebinding page could read this answer.
      const error = new WebError('PW_WEB_WRONG_HOST', { host: (hostNameOf(host) ?? String(host ?? '')).slice(0, 80).replace(/[^\x21-\x7e]/g, '?') }, { field: 'host' });
      reply.code(error.status).type('application/json; charset=utf-8').send(error.toBody());
      return;
    }
    done();
  });

  installErrorHandling(app, ctx);
  answerFrameworkError = frameworkErrorHandler(ctx);
  app.register(async (scope) => {
    // Inside this scope so it runs after the cookie plugin's own onRequest hook has parsed cookies.
    scope.addHook('onRequest', (request, _reply, done) => {
      const lookup = resolvePrincipal(
        ctx.db,
        request.headers.authorization,
        request.cookies[SESSION_COOKIE],
        ctx.now(),
        config.web.session_idle,
        ctx.monotonicNow(),
      );
      request.principal = lookup.kind === 'found' ? lookup.principal : null;
      request.badCredentials = lookup.kind === 'bad-token';
      done();
    });
    registerStaticRoutes(scope);
    registerHealthRoute(scope, ctx);
    registerAuthRoutes(scope, ctx);
    registerApiRoutes(scope, ctx);
    registerPageRoutes(scope, ctx);
    registerAckLinkRoutes(scope, ctx);
    registerLiveStreamRoute(scope, ctx, headers);
    if (options.metrics) registerMetricsRoute(scope, ctx, options.metrics);
  });
  return app;
}
