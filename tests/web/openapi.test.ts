import { Validator } from '@seriousme/openapi-schema-validator';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startTestWeb, type TestWeb } from './fixtures/testWeb.js';

let web: TestWeb;
beforeAll(async () => {
  web = await startTestWeb();
});
afterAll(async () => {
  await web.close();
});

describe('GET /api/v1/openapi.json', () => {
  it('is a valid OpenAPI 3.0 document (checked by @seriousme/openapi-schema-validator)', async () => {
    const res = await web.app.inject({ method: 'GET', url: '/api/v1/openapi.json' });
    expect(res.statusCode).toBe(200);
    const doc = res.json();
    const validator = new Validator();
    const result = await validator.validate(doc);
    expect(result.errors ?? []).toEqual([]);
    expect(result.valid).toBe(true);
    expect(validator.version).toBe('3.0');
  });

  it('documents every route the issue names', async () => {
    const doc = (await web.app.inject({ method: 'GET', url: '/api/v1/openapi.json' })).json() as { paths: Record<string, Record<string, unknown>> };
    const expected: Array<[string, string]> = [
      ['/api/v1/loops', 'get'],
      ['/api/v1/loops/{id}', 'get'],
      ['/api/v1/alarms', 'get'],
      ['/api/v1/alarms/{id}/ack', 'post'],
      ['/api/v1/alarms/{id}/shelve', 'post'],
      ['/api/v1/alarms/{id}/unshelve', 'post'],
      ['/api/v1/loops/{id}/out-of-service', 'post'],
      ['/api/v1/loops/{id}/return-to-service', 'post'],
      ['/api/v1/events', 'get'],
      ['/api/v1/decoders', 'get'],
      ['/healthz', 'get'],
    ];
    for (const [path, method] of expected) expect(doc.paths[path]?.[method], `${method} ${path}`).toBeDefined();
  });

  it('needs no credentials', async () => {
    expect((await web.app.inject({ method: 'GET', url: '/api/v1/openapi.json' })).statusCode).toBe(200);
  });
});
