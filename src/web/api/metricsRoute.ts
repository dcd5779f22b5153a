import type { FastifyInstance, FastifyRequest } from 'fastify';
import { sameSecret } from '../auth/csrfCheck.js';
import { WebError } from '../webErrors.js';
import type { WebContext } from '../webContext.js';

/** What /metrics serves: the Prometheus text exposition, rendered fresh per scrape. */
export interface MetricsSource {
  contentType: string;
  render(): Promise<string>;
}

/** 127.0.0.0/8 and ::1, also as IPv4-mapped IPv6 (RFC 4291 §2.5.5.2). */
export function isLoopbackAddress(address: string | undefined): boolean {
  if (!address) return false;
  const v4 = address.startsWith('::ffff:') ? address.slice(7) : address;
  return v4.startsWith('127.') || address === '::1';
}

/**
 * /metrics tells which building is tripped right now, so it is not public: without web.metrics_token it
 * answers only clients on this machine (a Prometheus on the same host, or a tunnel); with the token it
 * answers whoever sends `Authorization: Bearer <token>`, from anywhere. The address checked is the
 * socket's own, never a forwarded header. Others get 404, as if there were nothing here.
 */
export function registerMetricsRoute(app: FastifyInstance, ctx: WebContext, source: MetricsSource): void {
  const token = ctx.config.web.metrics_token;
  const allowed = (request: FastifyRequest): boolean => {
    if (token === undefined) return isLoopbackAddress(request.socket.remoteAddress);
    const match = /^Bearer\s+(\S+)\s*$/i.exec(request.headers.authorization ?? '');
    return match !== null && sameSecret(match[1]!, token);
  };
  app.get('/metrics', async (request, reply) => {
    if (!allowed(request)) throw new WebError('PW_WEB_NO_ROUTE', { method: request.method, path: '/metrics' }, { field: 'url' });
    return reply.type(source.contentType).send(await source.render());
  });
}
