import type { ServerResponse } from 'node:http';
import type { FastifyInstance } from 'fastify';
import { requireRole } from '../auth/requestAuth.js';
import type { WebContext } from '../webContext.js';

/** Comment lines keep proxies and phones from dropping an idle stream. */
const KEEPALIVE_MS = 20_000;

/**
 * /events/stream: server-sent events (WHATWG HTML, "Server-sent events"). Each change in the daemon
 * becomes `event: loops` or `event: alarms`; clients fetch what they show. The data says nothing
 * secret, so a stream needs only the viewer role.
 */
export function registerLiveStreamRoute(app: FastifyInstance, ctx: WebContext, headers: Record<string, string>): void {
  const open = new Set<ServerResponse>();

  app.get('/events/stream', async (request, reply) => {
    requireRole(request, 'viewer');
    reply.hijack();
    const res = reply.raw;
    res.writeHead(200, {
      ...headers,
      'content-type': 'text/event-stream; charset=utf-8',
      'cache-control': 'no-store',
      connection: 'keep-alive',
      'x-accel-buffering': 'no',
    });
    res.write('retry: 5000\n: connected\n\n');
    open.add(res);
    const unsubscribe = ctx.live.subscribe((event) => {
      res.write(`event: ${event.type}\ndata: ${JSON.stringify({ type: event.type })}\n\n`);
    });
    const keepalive = setInterval(() => res.write(': keep-alive\n\n'), KEEPALIVE_MS);
    keepalive.unref();
    const stop = () => {
      clearInterval(keepalive);
      unsubscribe();
      open.delete(res);
    };
    res.on('close', stop);
    res.on('error', stop);
  });

  // End open streams first, or closing the server would wait for them forever.
  app.addHook('preClose', async () => {
    for (const res of open) res.end();
    open.clear();
  });
}
