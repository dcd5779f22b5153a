/**
 * Headers on every response. The CSP allows scripts and styles only from this server's /static/*,
 * so no inline script can run even if escaping were ever missed; inline SVG needs no allowance
 * because it is drawn with presentation attributes, never style attributes.
 */
export const CONTENT_SECURITY_POLICY = [
  "default-src 'none'",
  "script-src 'self'",
  "style-src 'self'",
  "img-src 'self'",
  "connect-src 'self'",
  "form-action 'self'",
  "frame-ancestors 'none'",
  "base-uri 'none'",
].join('; ');

export function securityHeaders(options: { tls: boolean }): Record<string, string> {
  const headers: Record<string, string> = {
    'content-security-policy': CONTENT_SECURITY_POLICY,
    'x-content-type-options': 'nosniff',
    // Acknowledge links carry their credential in the path: never leak it to another site.
    'referrer-policy': 'no-referrer',
    'x-frame-options': 'DENY',
    'cross-origin-opener-policy': 'same-origin',
    'cross-origin-resource-policy': 'same-origin',
    'permissions-policy': 'camera=(), microphone=(), geolocation=()',
  };
  if (options.tls) headers['strict-transport-security'] = 'max-age=31536000';
  return headers;
}
