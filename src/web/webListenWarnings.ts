import type { SiteConfig } from '../config/schema.js';

/** Splits web.listen ("HOST:PORT", "[v6]:PORT") into its parts. */
export function parseListen(listen: string): { host: string; port: number } {
  const match = /^(?:\[([0-9a-fA-F:]+)\]|([^:]+)):(\d{1,5})$/.exec(listen);
  if (!match) return { host: listen, port: 0 };
  return { host: match[1] ?? match[2] ?? '', port: Number(match[3]) };
}

/** Loopback per RFC 1122 §3.2.1.3 (127.0.0.0/8) and RFC 4291 §2.5.3 (::1); "localhost" per RFC 6761 §6.3. */
export function isLoopbackHost(host: string): boolean {
  const h = host.toLowerCase();
  return h === 'localhost' || h === '::1' || /^127\.\d{1,3}\.\d{1,3}\.\d{1,3}$/.test(h);
}

/**
 * Warnings the daemon logs on every start: a web port reachable from the network without TLS sends
 * passwords and session cookies in clear text.
 */
export function webListenWarnings(config: SiteConfig): string[] {
  const warnings: string[] = [];
  const { host } = parseListen(config.web.listen);
  if (!config.web.tls && !isLoopbackHost(host)) {
    const everywhere = host === '0.0.0.0' || host === '::';
    warnings.push(
      `web.listen is ${config.web.listen}${everywhere ? ' (every network interface)' : ''} without web.tls: ` +
        'passwords and session cookies cross the network unencrypted. Set web.tls.cert and web.tls.key, ' +
        'or listen on 127.0.0.1 behind a TLS proxy.',
    );
  }
  if (config.web.public_url?.startsWith('http://') && !isLoopbackHost(new URL(config.web.public_url).hostname.replace(/^\[|\]$/g, ''))) {
    warnings.push(`web.public_url ${config.web.public_url} is plain http: acknowledge links in mail will travel unencrypted.`);
  }
  return warnings;
}
