import fc from 'fast-check';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestWeb, type TestWeb } from './fixtures/testWeb.js';

let web: TestWeb;
beforeAll(async () => {
  web = await startTestWeb();
});
afterAll(async () => {
  await web.close();
});

const ROUTES = ['/api/v1/alarms/7/ack', '/api/v1/alarms/7/shelve', '/api/v1/alarms/8/unshelve', '/api/v1/loops/glasshouse/out-of-service', '/api/v1/loops/pump-shed/return-to-service'];

describe('malformed input never reaches a 5xx', () => {
  it('random JSON bodies to every action: 2xx or 4xx, and every 4xx names a field', async () => {
    await fc.assert(
      fc.asyncProperty(fc.constantFrom(...ROUTES), fc.jsonValue(), async (url, body) => {
        const res = await web.app.inject({
          method: 'POST',
          url,
          headers: { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'application/json' },
          payload: JSON.stringify(body),
        });
        expect(res.statusCode).toBeLessThan(500);
        if (res.statusCode === 400) expect(typeof res.json().error.field).toBe('string');
      }),
      { numRuns: 300 },
    );
  });

  it('random raw bytes as a JSON body', async () => {
    await fc.assert(
      fc.asyncProperty(fc.uint8Array({ maxLength: 200 }), async (bytes) => {
        const res = await web.app.inject({
          method: 'POST',
          url: '/api/v1/alarms/7/shelve',
          headers: { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'application/json' },
          payload: Buffer.from(bytes),
        });
        expect(res.statusCode).toBeLessThan(500);
      }),
      { numRuns: 200 },
    );
  });

  it('random query strings on the read routes', async () => {
    const key = fc.constantFrom('loop', 'since', 'until', 'cursor', 'limit', 'priority', 'status', 'hours', 'x');
    const query = fc.array(fc.tuple(key, fc.string({ maxLength: 30 })), { maxLength: 5 });
    await fc.assert(
      fc.asyncProperty(fc.constantFrom('/api/v1/events', '/api/v1/alarms', '/api/v1/loops/hen-house/timeline', '/history'), query, async (path, pairs) => {
        const qs = new URLSearchParams(pairs).toString();
        const res = await web.app.inject({ method: 'GET', url: `${path}?${qs}`, headers: { authorization: `Bearer ${web.tokens.viewer}` } });
        expect(res.statusCode, `${path}?${qs}`).toBeLessThan(500);
      }),
      { numRuns: 300 },
    );
  });

  it('random path segments', async () => {
    await fc.assert(
      fc.asyncProperty(fc.string({ maxLength: 40 }), async (segment) => {
        const res = await web.app.inject({ method: 'GET', url: `/api/v1/alarms/${encodeURIComponent(segment)}`, headers: { authorization: `Bearer ${web.tokens.viewer}` } });
        expect(res.statusCode).toBeLessThan(500);
        const page = await web.app.inject({ method: 'GET', url: `/ack/${encodeURIComponent(segment)}` });
        expect(page.statusCode).toBeLessThan(500);
      }),
      { numRuns: 200 },
    );
  });
});
