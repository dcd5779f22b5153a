import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { requireCsrf, requireRole } from '../auth/requestAuth.js';
import { assertCommandOk } from '../http/commandOutcome.js';
import { notFound } from '../webErrors.js';
import type { WebContext } from '../webContext.js';
import {
  ackBodySchema,
  alarmIdParamSchema,
  alarmsQuerySchema,
  emptyBodySchema,
  eventsQuerySchema,
  loopIdParamSchema,
  outOfServiceBodySchema,
  returnToServiceBodySchema,
  shelveBodySchema,
  timelineQuerySchema,
} from './apiSchemas.js';
import {
  alarmDetailToApi,
  alarmToApi,
  decoderToApi,
  eventToApi,
  loopDetailToApi,
  loopToApi,
  timelineToApi,
} from './apiViews.js';
import { buildOpenApiDocument } from './openApiDocument.js';
import { parseInput } from './parseInput.js';

export const API_PREFIX = '/api/v1';
const DEFAULT_PAGE = 100;

/** The JSON API. Every handler: check the role, parse input with its schema, call the port, map the view. */
export function registerApiRoutes(app: FastifyInstance, ctx: WebContext): void {
  const { read, commands } = ctx;
  const maxShelveMinutes = Math.max(1, Math.floor(ctx.config.web.max_shelve / 60_000));
  const shelveBody = shelveBodySchema(maxShelveMinutes);

  const alarmId = (request: FastifyRequest) => Number(parseInput(alarmIdParamSchema, request.params, 'params').id);
  const loopId = (request: FastifyRequest) => parseInput(loopIdParamSchema, request.params, 'params').id;
  /** An operator action: role, then CSRF for browser sessions, then the command, then the fresh view. */
  const operator = (request: FastifyRequest) => {
    const principal = requireRole(request, 'operator');
    requireCsrf(request, ctx, principal, undefined);
    return principal;
  };
  const alarmBody = (id: number) => {
    const alarm = read.alarm(id);
    if (!alarm) throw notFound('alarm', id);
    return alarmDetailToApi(alarm);
  };

  /**
   * /loops and /alarms (active) are polled by every board and phone; their bodies are serialised
   * once per read-model version and sent as the same bytes until anything changes. Without a
   * version every request builds its body. Kept as UTF-8 bytes, not text: a string would be measured
   * for Content-Length and encoded again for the socket on every request.
   */
  const cachedJson = (build: () => unknown) => {
    let at: number | null = null;
    let body = Buffer.alloc(0);
    return (reply: FastifyReply): FastifyReply => {
      const version = read.version?.() ?? null;
      if (version === null || version !== at) {
        body = Buffer.from(JSON.stringify(build()), 'utf8');
        at = version;
      }
      return reply.type('application/json; charset=utf-8').send(body);
    };
  };
  const loopsBody = cachedJson(() => read.loops().map(loopToApi));
  const activeAlarmsBody = cachedJson(() => read.alarms('active').map(alarmToApi));

  app.get(`${API_PREFIX}/openapi.json`, async () => buildOpenApiDocument({ maxShelveMinutes, siteName: ctx.config.site.name }));

  app.get(`${API_PREFIX}/me`, async (request) => {
    const principal = requireRole(request, 'viewer');
    return { name: principal.name, role: principal.role, via: principal.kind };
  });

  app.get(`${API_PREFIX}/loops`, async (request, reply) => {
    requireRole(request, 'viewer');
    parseInput(emptyBodySchema, request.query, 'query');
    return loopsBody(reply);
  });

  app.get(`${API_PREFIX}/loops/:id`, async (request) => {
    requireRole(request, 'viewer');
    const id = loopId(request);
    const loop = read.loop(id);
    if (!loop) throw notFound('loop', id);
    return loopDetailToApi(loop);
  });

  app.get(`${API_PREFIX}/loops/:id/timeline`, async (request) => {
    requireRole(request, 'viewer');
    const id = loopId(request);
    const hours = Number(parseInput(timelineQuerySchema, request.query, 'query').hours ?? 24);
    const now = ctx.now();
    const timeline = read.timeline(id, now - hours * 3_600_000, now);
    if (!timeline) throw notFound('loop', id);
    return timelineToApi(timeline);
  });

  app.post(`${API_PREFIX}/loops/:id/out-of-service`, async (request) => {
    const principal = operator(request);
    const id = loopId(request);
    const body = parseInput(outOfServiceBodySchema, request.body, 'body');
    assertCommandOk(commands.takeOutOfService(id, principal.name, body.note), id);
    return loopDetailOrThrow(id);
  });

  app.post(`${API_PREFIX}/loops/:id/return-to-service`, async (request) => {
    const principal = operator(request);
    const id = loopId(request);
    const body = parseInput(returnToServiceBodySchema, request.body, 'body');
    assertCommandOk(commands.returnToService(id, principal.name, body.note?.trim() || null), id);
    return loopDetailOrThrow(id);
  });

  function loopDetailOrThrow(id: string) {
    const loop = read.loop(id);
    if (!loop) throw notFound('loop', id);
    return loopDetailToApi(loop);
  }

  app.get(`${API_PREFIX}/alarms`, async (request, reply) => {
    requireRole(request, 'viewer');
    const { status } = parseInput(alarmsQuerySchema, request.query, 'query');
    // "all" reads stored history too, which the writer may catch up on at any time: never cached.
    if (status === 'active') return activeAlarmsBody(reply);
    return read.alarms(status).map(alarmToApi);
  });

  app.get(`${API_PREFIX}/alarms/:id`, async (request) => {
    requireRole(request, 'viewer');
    return alarmBody(alarmId(request));
  });

  app.post(`${API_PREFIX}/alarms/:id/ack`, async (request) => {
    const principal = operator(request);
    const id = alarmId(request);
    const body = parseInput(ackBodySchema, request.body, 'body');
    assertCommandOk(commands.acknowledge(id, principal.name, body.note?.trim() || null), id);
    return alarmBody(id);
  });

  app.post(`${API_PREFIX}/alarms/:id/shelve`, async (request) => {
    const principal = operator(request);
    const id = alarmId(request);
    const body = parseInput(shelveBody, request.body, 'body');
    assertCommandOk(commands.shelve(id, principal.name, body.minutes, body.reason), id);
    return alarmBody(id);
  });

  app.post(`${API_PREFIX}/alarms/:id/unshelve`, async (request) => {
    const principal = operator(request);
    const id = alarmId(request);
    parseInput(emptyBodySchema, request.body, 'body');
    assertCommandOk(commands.unshelve(id, principal.name), id);
    return alarmBody(id);
  });

  app.get(`${API_PREFIX}/events`, async (request) => {
    requireRole(request, 'viewer');
    const query = parseInput(eventsQuerySchema, request.query, 'query');
    if (query.loop !== undefined && !read.loops().some((l) => l.id === query.loop)) throw notFound('loop', query.loop, 'loop');
    const page = read.events({
      loopId: query.loop,
      priority: query.priority,
      sinceMs: query.since === undefined ? undefined : Date.parse(query.since),
      untilMs: query.until === undefined ? undefined : Date.parse(query.until),
      cursor: query.cursor,
      limit: query.limit === undefined ? DEFAULT_PAGE : Number(query.limit),
    });
    return { items: page.items.map(eventToApi), nextCursor: page.nextCursor };
  });

  app.get(`${API_PREFIX}/decoders`, async (request) => {
    requireRole(request, 'viewer');
    return read.decoders().map(decoderToApi);
  });
}
