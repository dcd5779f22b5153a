import { describe, expect, it } from 'vitest';
import { csrfProblem } from '../../../src/web/auth/csrfCheck.js';
import { decideLoginThrottle } from '../../../src/web/auth/loginThrottle.js';

const base = { origin: undefined, secFetchSite: undefined, allowedOrigins: ['http://monitor.local:8080'], expectedToken: 'tok-123', submittedToken: 'tok-123' };

describe('csrfProblem', () => {
  it('accepts the session token with no Origin (older browsers), an opaque one, or the server\'s own Origin', () => {
    expect(csrfProblem(base)).toBeNull();
    expect(csrfProblem({ ...base, origin: 'null', secFetchSite: 'same-origin' })).toBeNull();
    expect(csrfProblem({ ...base, origin: 'http://monitor.local:8080', secFetchSite: 'same-origin' })).toBeNull();
  });

  it('refuses missing or wrong tokens, foreign or opaque origins, and cross-site fetch metadata', () => {
    expect(csrfProblem({ ...base, submittedToken: undefined })).toMatch(/missing/);
    expect(csrfProblem({ ...base, submittedToken: 'tok-124' })).toMatch(/does not match/);
    expect(csrfProblem({ ...base, submittedToken: 'tok-12' })).toMatch(/does not match/);
    expect(csrfProblem({ ...base, origin: 'http://monitor.local:8081' })).toMatch(/origin/);
    expect(csrfProblem({ ...base, origin: 'null', secFetchSite: 'cross-site' })).toMatch(/another site/);
    expect(csrfProblem({ ...base, origin: 'null', submittedToken: undefined })).toMatch(/missing/);
    // W3C Fetch Metadata Request Headers: Sec-Fetch-Site "cross-site".
    expect(csrfProblem({ ...base, secFetchSite: 'cross-site' })).toMatch(/another site/);
    expect(csrfProblem({ ...base, expectedToken: null })).toMatch(/no session/);
  });
});

describe('decideLoginThrottle', () => {
  it('allows up to the limit of failures per minute, per address and per name', () => {
    expect(decideLoginThrottle({ byIp: 4, byName: 4 }, 5)).toEqual({ allowed: true });
    expect(decideLoginThrottle({ byIp: 5, byName: 0 }, 5)).toEqual({ allowed: false, retryAfterSeconds: 60 });
    expect(decideLoginThrottle({ byIp: 1, byName: 5 }, 5)).toEqual({ allowed: false, retryAfterSeconds: 60 });
  });

  it('the rule over every count: refused exactly when the address is at the limit, or the name is and this address has failed too (issue 9)', () => {
    for (let limit = 1; limit <= 6; limit++) {
      for (let byIp = 0; byIp <= limit + 2; byIp++) {
        for (let byName = 0; byName <= limit + 2; byName++) {
          const refused = byIp >= limit || (byName >= limit && byIp > 0);
          expect(decideLoginThrottle({ byIp, byName }, limit).allowed, `limit ${limit} byIp ${byIp} byName ${byName}`).toBe(!refused);
        }
      }
    }
    // A clean address is never stopped by the name's failures alone: the real user signs in from their phone.
    expect(decideLoginThrottle({ byIp: 0, byName: 10_000 }, 5)).toEqual({ allowed: true });
  });
});
