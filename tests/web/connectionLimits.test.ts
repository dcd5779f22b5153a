import { connect, type Socket } from 'node:net';
import fc from 'fast-check';
import { afterEach, describe, expect, it } from 'vitest';
import { isLoopbackAddress } from '../../src/web/api/metricsRoute.js';
import { readOpenFileLimit, webConnectionCap } from '../../src/web/buildWebServer.js';
import { startTestWeb, testConfig, type TestWeb } from './fixtures/testWeb.js';

/**
 * Slow and half-sent requests (issue 9, item 2): each holds a socket and a file, so they are dropped
 * after web.request_timeout, and connections are capped below the open-file limit. Driven by socket
 * events: the test waits for the server to act, and the test timeout only bounds a failure.
 */
let web: TestWeb | null = null;
const sockets: Socket[] = [];
afterEach(async () => {
  for (const socket of sockets.splice(0)) socket.destroy();
  await web?.close();
  web = null;
});

async function listening(overrides: Record<string, unknown>): Promise<{ port: number }> {
  web = await startTestWeb({ config: testConfig({ web: { listen: '127.0.0.1:0', login_attempts_per_minute: 5, max_shelve: '24h', ...overrides } }) });
  await web.app.listen({ host: '127.0.0.1', port: 0 });
  const address = web.app.server.address();
  return { port: typeof address === 'object' && address ? address.port : 0 };
}

/** Headers complete, body promised but only partly sent. Resolves with what the server said when it closed the socket. */
function halfSent(port: number): { socket: Socket; closed: Promise<string> } {
  const socket = connect(port, '127.0.0.1');
  sockets.push(socket);
  let received = '';
  socket.setEncoding('utf8');
  socket.on('data', (chunk: string) => (received += chunk));
  socket.on('error', () => undefined);
  socket.write('POST /login HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Type: application/x-www-form-urlencoded\r\nContent-Length: 1000\r\n\r\nname=ot');
  const closed = new Promise<string>((resolve) => socket.on('close', () => resolve(received)));
  return { socket, closed };
}

describe('request timeout', () => {
  it('a request whose body never finishes is answered 408 and closed, not held for ever', async () => {
    const { port } = await listening({ request_timeout: '1s' });
    const { closed } = halfSent(port);
    const said = await closed;
    // RFC 9110 §15.5.9: 408 Request Timeout.
    expect(said).toMatch(/^HTTP\/1\.1 408 /);
    expect(web!.app.server.requestTimeout).toBe(1000);
    expect(web!.app.server.headersTimeout).toBe(1000);
  });

  it('the default is 30 s, set on the server (fastify alone would wait for ever)', async () => {
    await listening({});
    expect(web!.app.server.requestTimeout).toBe(30_000);
    expect(web!.app.server.timeout).toBe(60_000);
  });
});

describe('connection cap', () => {
  it('connections past web.max_connections are closed at once while the first ones are held', async () => {
    const { port } = await listening({ max_connections: 3, request_timeout: '10m' });
    const held = Array.from({ length: 3 }, () => halfSent(port));
    // Wait until the server has all three (each is a connection it counts).
    await new Promise<void>((resolve) => {
      const poll = () => web!.app.server.getConnections((_e, n) => (n >= 3 ? resolve() : setImmediate(poll)));
      poll();
    });
    const extra = halfSent(port);
    expect(await extra.closed).toBe('');
    for (const h of held) expect(h.socket.destroyed).toBe(false);
    expect(web!.app.server.maxConnections).toBe(webConnectionCap(3, readOpenFileLimit()));
  });

  it('the cap rule: never above the configured number, always leaving 64 files for the rest, at least 1', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 100_000 }), fc.option(fc.integer({ min: 1, max: 1_000_000 })), (configured, limit) => {
        const cap = webConnectionCap(configured, limit);
        expect(cap).toBeGreaterThanOrEqual(1);
        expect(cap).toBeLessThanOrEqual(configured);
        if (limit === null) expect(cap).toBe(configured);
        else if (limit > 65) expect(cap).toBeLessThanOrEqual(limit - 64);
        if (limit !== null && limit - 64 >= configured) expect(cap).toBe(configured);
      }),
    );
    expect(webConnectionCap(200, 256)).toBe(192);
  });

  it('reads the open-file limit from /proc/self/limits (Linux proc(5))', () => {
    const limit = readOpenFileLimit();
    expect(limit === null || (Number.isInteger(limit) && limit > 0)).toBe(true);
  });
});

describe('/metrics access (issue 9, item 11)', () => {
  const metrics = { contentType: 'text/plain; version=0.0.4', render: async () => 'pairwatch_loops_tripped 1\n' };

  it('without web.metrics_token: loopback clients only, others see nothing there', async () => {
    web = await startTestWeb({ metrics });
    for (const remoteAddress of ['127.0.0.1', '127.8.9.1', '::1', '::ffff:127.0.0.1']) {
      const res = await web.app.inject({ method: 'GET', url: '/metrics', remoteAddress });
      expect(res.statusCode, remoteAddress).toBe(200);
      expect(res.body).toContain('pairwatch_loops_tripped');
    }
    for (const remoteAddress of ['192.168.1.30', '10.0.0.1', '::ffff:192.0.2.1', '2001:db8::1']) {
      const res = await web.app.inject({ method: 'GET', url: '/metrics', remoteAddress });
      expect(res.statusCode, remoteAddress).toBe(404);
      expect(res.body).not.toContain('pairwatch_loops_tripped');
    }
  });

  it('with web.metrics_token: only with that bearer token, from anywhere', async () => {
    const token = 'scrape-token-0123456789';
    web = await startTestWeb({ metrics, config: testConfig({ web: { listen: '127.0.0.1:0', metrics_token: token, login_attempts_per_minute: 5, max_shelve: '24h' } }) });
    const get = (authorization?: string, remoteAddress = '192.168.1.30') =>
      web!.app.inject({ method: 'GET', url: '/metrics', remoteAddress, headers: authorization ? { authorization } : {} });
    expect((await get(`Bearer ${token}`)).statusCode).toBe(200);
    expect((await get(`Bearer ${token}`, '127.0.0.1')).statusCode).toBe(200);
    expect((await get()).statusCode).toBe(404);
    expect((await get(undefined, '127.0.0.1')).statusCode).toBe(404);
    expect((await get(`Bearer ${token}x`)).statusCode).toBe(404);
    expect((await get(`Bearer ${web.tokens.admin}`)).statusCode).toBe(404);
  });

  it('loopback addresses, by RFC 1122 §3.2.1.3 (127/8) and RFC 4291 (::1, IPv4-mapped)', () => {
    expect(['127.0.0.1', '127.255.255.254', '::1', '::ffff:127.0.0.2'].every(isLoopbackAddress)).toBe(true);
    expect(['128.0.0.1', '10.127.0.1', '::2', '::ffff:10.0.0.1', '', undefined, 'fe80::1'].some(isLoopbackAddress)).toBe(false);
  });
});
