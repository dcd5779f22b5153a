import { randomBytes } from 'node:crypto';
import type { FastifyError, FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import { renderMessagePage } from '../pages/messagePage.js';
import { WebError } from '../webErrors.js';
import type { WebContext } from '../webContext.js';
import { wantsJson } from './requestKind.js';

/** fastify's own errors that are the client's fault, mapped to ours so the answer names the field. */
function fromFastifyError(error: FastifyError, request: FastifyRequest): WebError | null {
  switch (error.code) {
    case 'FST_ERR_CTP_INVALID_JSON_BODY':
    case 'FST_ERR_CTP_EMPTY_JSON_BODY':
      return new WebError('PW_WEB_BAD_JSON', { reason: error.message.replace(/^Body is not valid JSON but content-type is set to 'application\/json'$/, 'unreadable') }, { field: 'body' });
    case 'FST_ERR_CTP_BODY_TOO_LARGE':
      return new WebError('PW_WEB_BODY_TOO_LARGE', { limit: 65536 }, { field: 'body' });
    case 'FST_ERR_CTP_INVALID_CONTENT_LENGTH':
      return new WebError('PW_WEB_BAD_INPUT', { field: 'content-length', reason: 'does not match the body' }, { field: 'content-length' });
    case 'FST_ERR_CTP_INVALID_MEDIA_TYPE':
      return new WebError('PW_WEB_UNSUPPORTED_MEDIA', { type: String(request.headers['content-type'] ?? 'none').slice(0, 80) }, { field: 'content-type' });
    case 'FST_ERR_BAD_URL':
    case 'FST_ERR_ASYNC_CONSTRAINT':
      return new WebError('PW_WEB_BAD_INPUT', { field: 'url', reason: 'is not a valid address' }, { field: 'url' });
    default:
      if (error instanceof SyntaxError || (error.statusCode !== undefined && error.statusCode >= 400 && error.statusCode < 500)) {
        return new WebError('PW_WEB_BAD_INPUT', { field: 'request', reason: 'could not be read' }, { field: 'request' });
      }
      return null;
  }
}

const PAGE_TITLE: Record<number, string> = {
  400: 'That did not work',
  401: 'Sign in needed',
  403: 'Not allowed',
  404: 'Not found',
  409: 'Not possible now',
  413: 'Too large',
  415: 'Not accepted',
  421: 'Wrong address',
  429: 'Too many tries',
  500: 'Something went wrong',
  503: 'Busy',
};

function send(error: WebError, request: FastifyRequest, reply: FastifyReply, ctx: WebContext): FastifyReply {
  for (const [name, value] of Object.entries(error.headers)) reply.header(name, value);
  if (wantsJson(request.url)) return reply.code(error.status).type('application/json; charset=utf-8').send(error.toBody());
  if (error.status === 401 && request.method === 'GET') {
    return reply.redirect(`/login?next=${encodeURIComponent(request.url)}`, 303);
  }
  if (error.status === 401 && error.code === 'PW_WEB_UNAUTHENTICATED') return reply.redirect('/login', 303);
  return reply
    .code(error.status)
    .type('text/html; charset=utf-8')
    .send(
      renderMessagePage({
        siteName: ctx.config.site.name,
        principal: request.principal ?? null,
        title: PAGE_TITLE[error.status] ?? 'That did not work',
        message: error.message,
        code: error.code,
      }),
    );
}

/** For fastify's `frameworkErrors`: errors raised before routing, answered in the same shape as the rest. */
export function frameworkErrorHandler(ctx: WebContext) {
  return (_error: FastifyError, request: FastifyRequest, reply: FastifyReply): void => {
    // Only the address is known at this point (a broken %-escape, a path parameter past its length).
    send(new WebError('PW_WEB_BAD_INPUT', { field: 'url', reason: 'is not a valid address' }, { field: 'url' }), request, reply, ctx);
  };
}

/** One error handler and one not-found handler for the whole server: JSON for the API, pages for people. */
export function installErrorHandling(app: FastifyInstance, ctx: WebContext): void {
  app.setErrorHandler((raw: FastifyError, request, reply) => {
    let error =
      raw instanceof WebError
        ? raw
        : (raw as { code?: unknown }).code === 'PW_STORE_BAD_CURSOR'
          ? new WebError('PW_WEB_BAD_INPUT', { field: 'cursor', reason: 'is not a cursor this server gave out' }, { field: 'cursor' })
          : fromFastifyError(raw, request);
    if (!error) {
      const ref = randomBytes(4).toString('hex');
      ctx.log.error({ err: raw, ref, method: request.method, url: request.url.split('?')[0] }, 'web request failed');
      error = new WebError('PW_WEB_INTERNAL', { ref });
    }
    return send(error, request, reply, ctx);
  });
  app.setNotFoundHandler((request, reply) =>
    send(new WebError('PW_WEB_NO_ROUTE', { method: request.method, path: request.url.split('?')[0] ?? '' }, { field: 'url' }), request, reply, ctx),
  );
}
