import { createServer, type Server } from 'node:http';
import type { AddressInfo } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import type { WebConfig } from '../../../src/config/schema.js';
import { checkWebPort, defaultWebPortDeps, parseListen } from '../../../src/ops/doctor/checkWebPort.js';
import { freePort } from '../../helpers/freePort.js';

const opened: Server[] = [];
afterEach(async () => {
  await Promise.all(opened.splice(0).map((s) => new Promise<void>((resolve) => s.close(() => resolve()))));
});

async function serve(status: number, body: string): Promise<number> {
  const server = createServer((_req, res) => {
    res.writeHead(status, { 'content-type': 'application/json' });
    res.end(body);
  });
  opened.push(server);
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', () => resolve()));
  return (server.address() as AddressInfo).port;
}

const web = (listen: string): WebConfig => ({
  listen,
  session_ttl: 1,
  ack_link_ttl: 1,
  max_shelve: 1,
  login_attempts_per_minute: 5,
  session_idle: 1,
  allowed_hosts: [],
  request_timeout: 1,
  max_connections: 1,
});

describe('checkWebPort (real sockets on loopback)', () => {
  it('passes a free port', async () => {
    const port = await freePort();
    expect((await checkWebPort(web(`127.0.0.1:${port}`), defaultWebPortDeps)).status).toBe('ok');
  });

  it('recognises the running service by its /healthz answer', async () => {
    const port = await serve(200, JSON.stringify({ ok: true, checks: [{ name: 'ingest', ok: true, reason: null }] }));
    const result = await checkWebPort(web(`127.0.0.1:${port}`), defaultWebPortDeps);
    expect(result.status).toBe('ok');
    expect(result.finding).toContain('running pairwatch service');
  });

  it('passes on the reasons a troubled service gives', async () => {
    const port = await serve(503, JSON.stringify({ ok: false, checks: [{ name: 'mail', ok: false, reason: 'mail server refuses connections' }] }));
    const result = await checkWebPort(web(`127.0.0.1:${port}`), defaultWebPortDeps);
    expect(result.status).toBe('warn');
    expect(result.finding).toContain('mail: mail server refuses connections');
  });

  it('fails a port held by some other program', async () => {
    const port = await serve(404, '<html>not here</html>');
    const result = await checkWebPort(web(`127.0.0.1:${port}`), defaultWebPortDeps);
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('not pairwatch');
    expect(result.fix).toContain('web.listen');
  });

  it('fails an address this machine does not have', async () => {
    // 192.0.2.0/24 is reserved for documentation (RFC 5737), so no host has it.
    const result = await checkWebPort(web('192.0.2.1:8080'), defaultWebPortDeps);
    expect(result.status).toBe('fail');
    expect(result.finding).toContain('no address 192.0.2.1');
  });

  it('parses bracketed IPv6 listen addresses', () => {
    expect(parseListen('[::1]:8080')).toEqual({ host: '::1', port: 8080 });
    expect(parseListen('nonsense')).toBeNull();
  });
});
