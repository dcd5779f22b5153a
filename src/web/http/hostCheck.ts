import { isIP } from 'node:net';

/**
 * The DNS-rebinding guard: a page on another site can point its own host name at this server's
 * address, and the browser then sends that name in Host. So the server answers only to names it was
 * given — web.listen's host, web.public_url's host and web.allowed_hosts — plus names that cannot be
 * rebound: IP literals (the browser was sent to the address itself) and "localhost" (resolved by the
 * browser's own machine, RFC 6761 §6.3). Ports are not compared: the name is what a rebinding forges.
 */
export function allowedHostNames(listen: string, publicUrl: string | undefined, extra: readonly string[]): Set<string> {
  const names = new Set<string>(['localhost']);
  const listenHost = /^(.*):\d+$/.exec(listen)?.[1];
  if (listenHost) names.add(listenHost.toLowerCase());
  if (publicUrl) names.add(new URL(publicUrl).hostname.toLowerCase());
  for (const name of extra) names.add(name.toLowerCase());
  return names;
}

/** The host name of a Host header value (RFC 9110 §7.2: uri-host [ ":" port ]), lower-case; null when unreadable. */
export function hostNameOf(hostHeader: string | undefined): string | null {
  if (hostHeader === undefined || hostHeader === '') return null;
  const match = /^(\[[0-9A-Fa-f:.]+\]|[^:[\]]+)(?::\d{0,5})?$/.exec(hostHeader);
  if (!match) return null;
  return match[1]!.toLowerCase().replace(/\.$/, '');
}

export function hostAllowed(hostHeader: string | undefined, allowed: ReadonlySet<string>): boolean {
  const name = hostNameOf(hostHeader);
  if (name === null) return false;
  if (allowed.has(name)) return true;
  const bare = name.startsWith('[') ? name.slice(1, -1) : name;
  return isIP(bare) !== 0 && (name.startsWith('[') ? isIP(bare) === 6 : isIP(bare) === 4);
}
