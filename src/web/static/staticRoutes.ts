import { createHash } from 'node:crypto';
import type { FastifyInstance } from 'fastify';
import { BOARD_SCRIPT } from './boardScript.js';
import { ICON_SVG } from './iconSvg.js';
import { SITE_STYLES } from './siteStyles.js';

const ASSETS = {
  '/static/board.js': { type: 'text/javascript; charset=utf-8', body: BOARD_SCRIPT },
  '/static/site.css': { type: 'text/css; charset=utf-8', body: SITE_STYLES },
  '/static/icon.svg': { type: 'image/svg+xml', body: ICON_SVG },
} as const;

/** The few static files, kept in code so the build needs no copy step; revalidated by ETag. */
export function registerStaticRoutes(app: FastifyInstance): void {
  for (const [path, asset] of Object.entries(ASSETS)) {
    const etag = `"${createHash('sha256').update(asset.body).digest('base64url').slice(0, 16)}"`;
    app.get(path, async (request, reply) => {
      reply.header('cache-control', 'no-cache').header('etag', etag);
      if (request.headers['if-none-match'] === etag) return reply.code(304).send();
      return reply.type(asset.type).send(asset.body);
    });
  }
  app.get('/favicon.ico', async (_request, reply) => reply.redirect('/static/icon.svg', 301));
}
