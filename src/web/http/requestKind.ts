/**
 * Machine clients get JSON errors; people get pages. Decided by path, never by guessing from headers.
 * The board's list fragment and the event stream are fetched by script, which needs a plain 401
 * rather than a redirect to the sign-in page.
 */
export function wantsJson(url: string): boolean {
  const path = url.split('?')[0] ?? '';
  return path.startsWith('/api/') || path === '/api' || path === '/healthz' || path === '/events/stream' || path === '/board/list';
}

/**
 * A local path to return to after sign-in; anything else becomes "/". The rule is the browser's own:
 * the text, resolved by the WHATWG URL parser against this server's origin, must stay on that origin
 * (browsers drop tabs and newlines and read "\\" as "/", so "/\t/evil.example" and "/\\evil.example"
 * leave it). Only printable ASCII is accepted, so the value is always a valid Location header
 * (RFC 9110 §5.5: no control characters; Node refuses anything outside Latin-1 with ERR_INVALID_CHAR);
 * non-ASCII in a path arrives %-encoded anyway.
 */
export function safeNextPath(next: unknown): string {
  if (typeof next !== 'string' || next.length > 500 || !/^\/[\x21-\x7e]*$/.test(next)) return '/';
  // The host part is never used: any origin with a special scheme resolves a path the same way.
  const base = 'http://pairwatch.invalid';
  let resolved: URL;
  try {
    resolved = new URL(next, base);
  } catch {
    return '/';
  }
  return resolved.origin === base ? next : '/';
}
