import { describe, expect, it } from 'vitest';
import { isLoopbackHost, webListenWarnings } from '../../src/web/webListenWarnings.js';
import { testConfig } from './fixtures/testWeb.js';

describe('webListenWarnings', () => {
  it('is quiet on loopback (RFC 1122 127/8, RFC 4291 ::1, RFC 6761 localhost)', () => {
    for (const host of ['127.0.0.1', '127.5.6.7', '::1', 'localhost']) expect(isLoopbackHost(host), host).toBe(true);
    expect(webListenWarnings(testConfig({ web: { listen: '127.0.0.1:8080' } }))).toEqual([]);
    expect(webListenWarnings(testConfig({ web: { listen: '[::1]:8080' } }))).toEqual([]);
  });

  it('warns when the port is reachable from the network without TLS', () => {
    const [warning] = webListenWarnings(testConfig({ web: { listen: '0.0.0.0:8080' } }));
    expect(warning).toMatch(/^web\.listen is 0\.0\.0\.0:8080 \(every network interface\) without web\.tls/);
    expect(webListenWarnings(testConfig({ web: { listen: '192.168.1.20:8080' } }))).toHaveLength(1);
  });

  it('is quiet with TLS configured', () => {
    expect(webListenWarnings(testConfig({ web: { listen: '0.0.0.0:8443', tls: { cert: 'c.pem', key: 'k.pem' } } }))).toEqual([]);
  });

  it('warns about plain-http public_url off loopback (ack links in mail)', () => {
    const warnings = webListenWarnings(testConfig({ web: { listen: '127.0.0.1:8080', public_url: 'http://farm-office.lan:8080' } }));
    expect(warnings).toHaveLength(1);
    expect(warnings[0]).toMatch(/public_url/);
  });
});
