import type { FastifyInstance } from 'fastify';
import type { HealthView } from '../webPorts.js';
import type { WebContext } from '../webContext.js';
import { healthToApi } from './apiViews.js';

/** /healthz: no authentication (for a watchdog or an uptime checker); says only what is broken. */
export function registerHealthRoute(app: FastifyInstance, ctx: WebContext): void {
  app.get('/healthz', async (_request, reply) => {
    let view: HealthView;
    try {
      view = ctx.read.health();
    } catch (err) {
      // The read model itself failing is the clearest sign the store is in trouble.
      ctx.log.error({ err }, 'health check failed');
      view = { ok: false, checks: [{ name: 'store', ok: false, reason: 'the monitor could not read its own state' }] };
    }
    const health = healthToApi(view);
    return reply.code(health.ok ? 200 : 503).header('cache-control', 'no-store').send(health);
  });
}
