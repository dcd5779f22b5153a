import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { request } from 'node:https';
import type { AddressInfo } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildWebServer } from '../../src/web/buildWebServer.js';
import { WebError } from '../../src/web/webErrors.js';
import { createFakeSite } from './fixtures/fakeSite.js';
import { ACK_SECRET, startTestWeb, testConfig, type TestWeb } from './fixtures/testWeb.js';

let dir: string;
let web: TestWeb;
let cert: Buffer;
let port: number;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), 'pairwatch-tls-'));
  // A throwaway self-signed certificate for 127.0.0.1, made by the system's openssl.
  execFileSync('openssl', [
    'req', '-x509', '-newkey', 'ec', '-pkeyopt', 'ec_paramgen_curve:prime256v1', '-nodes',
    '-keyout', join(dir, 'key.pem'), '-out', join(dir, 'cert.pem'), '-days', '2',
    '-subj', '/CN=127.0.0.1', '-addext', 'subjectAltName=IP:127.0.0.1',
  ], { stdio: 'ignore' });
  cert = readFileSync(join(dir, 'cert.pem'));
  web = await startTestWeb({ config: testConfig({ web: { listen: '127.0.0.1:0', tls: { cert: join(dir, 'cert.pem'), key: join(dir, 'key.pem') } } }) });
  await web.app.listen({ host: '127.0.0.1', port: 0 });
  port = (web.app.server.address() as AddressInfo).port;
});
afterAll(async () => {
  await web.close();
  rmSync(dir, { recursive: true, force: true });
});

function get(path: string): Promise<{ status: number; headers: Record<string, string | string[] | undefined> }> {
  return new Promise((resolve, reject) => {
    request({ host: '127.0.0.1', port, path, ca: cert }, (res) => {
      res.resume();
      resolve({ status: res.statusCode ?? 0, headers: res.headers });
    })
      .on('error', reject)
      .end();
  });
}

describe('TLS from web.tls', () => {
  it('serves https with HSTS', async () => {
    const res = await get('/healthz');
    expect(res.status).toBe(200);
    expect(res.headers['strict-transport-security']).toBe('max-age=31536000');
  });

  it('marks cookies Secure', async () => {
    const res = await get('/login');
    const cookies = ([] as string[]).concat(res.headers['set-cookie'] ?? []);
    expect(cookies.some((c) => /^pw_login=/.test(c) && /;\s*Secure/i.test(c))).toBe(true);
  });

  it('an unreadable certificate is a clear error naming the field, not a crash', () => {
    const site = createFakeSite(() => 0);
    const attempt = () =>
      buildWebServer({
        config: testConfig({ web: { listen: '127.0.0.1:0', tls: { cert: join(dir, 'missing.pem'), key: join(dir, 'key.pem') } } }),
        db: web.db,
        read: site.read,
        commands: site.commands,
        live: site.live,
        ackSecret: ACK_SECRET,
        now: () => 0,
      });
    expect(attempt).toThrow(WebError);
    try {
      attempt();
    } catch (err) {
      expect((err as WebError).code).toBe('PW_WEB_TLS_UNREADABLE');
      expect((err as WebError).field).toBe('web.tls.cert');
      expect((err as WebError).message).toContain('ENOENT');
    }
  });
});
