/**
 * Machine clients get JSON errors; people get pages. Decided by path, never by guessing from headers.
 * The board's list fragment and the event stream are fetched by script, which needs a plain 401
 * rather than a redirect to the sign-in page.
 */
export function wantsJson(url: string): boolean {
  const path = url.split('?')[0] ?? '';
  return path.startsWith('/api/') || path === '/api' || path === '/healthz' || path === '/events/stream' || path === '/board/list';
}

/** A local path to return to after sign-in; anything else (another host, a scheme) is refused. */
export function safeNextPath(next: unknown): string {
  if (typeof next !== 'string' || !next.startsWith('/') || next.startsWith('//') || next.startsWith('/\\')) return '/';
  if (/[\r\n]/.test(next) || next.length > 500) return '/';
  return next;
}
