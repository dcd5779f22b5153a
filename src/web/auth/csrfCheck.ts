import { timingSafeEqual } from 'node:crypto';

/**
 * Cross-site request checks for state-changing browser requests: a synchronizer token kept in the
 * session and echoed by every form (OWASP CSRF Prevention Cheat Sheet), plus the Origin and
 * Sec-Fetch-Site headers when the browser sends them. Returns the reason for a refusal, or null.
 *
 * `Origin: null` is not a refusal by itself: under our own `Referrer-Policy: no-referrer` Chromium
 * sends exactly that on same-site form posts. Such requests still need the token, and a cross-site
 * one is caught by Sec-Fetch-Site (W3C Fetch Metadata).
 */
export interface CsrfRequestFacts {
  origin: string | undefined;
  secFetchSite: string | undefined;
  /** Origins this server is reached at: its own (scheme://host of the request) and web.public_url's. */
  allowedOrigins: readonly string[];
  expectedToken: string | null;
  submittedToken: string | undefined;
}

export function sameSecret(a: string, b: string): boolean {
  const left = Buffer.from(a, 'utf8');
  const right = Buffer.from(b, 'utf8');
  return left.length === right.length && timingSafeEqual(left, right);
}

/** Origin and fetch-metadata check alone, for forms that have no session yet (sign-in). */
export function originProblem(facts: Pick<CsrfRequestFacts, 'origin' | 'secFetchSite' | 'allowedOrigins'>): string | null {
  if (facts.secFetchSite === 'cross-site') return 'sent from another site';
  if (facts.origin !== undefined && facts.origin !== 'null' && !facts.allowedOrigins.includes(facts.origin.toLowerCase())) {
    return `origin ${facts.origin} is not this server`;
  }
  return null;
}

export function csrfProblem(facts: CsrfRequestFacts): string | null {
  const origin = originProblem(facts);
  if (origin) return origin;
  if (facts.expectedToken === null) return 'no session';
  if (facts.submittedToken === undefined || facts.submittedToken === '') return 'the form token is missing';
  if (!sameSecret(facts.expectedToken, facts.submittedToken)) return 'the form token does not match this session';
  return null;
}
