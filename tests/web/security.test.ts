import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import pino from 'pino';
import { listLoginFailures } from '../../src/store/accountRepos.js';
import { cookieFrom, csrfFrom, session, signIn, startTestWeb, testConfig, USERS, type TestWeb } from './fixtures/testWeb.js';

let web: TestWeb;
afterEach(async () => {
  await web.close();
});

const formHeaders = (cookie: string, extra: Record<string, string> = {}) => ({
  cookie,
  'content-type': 'application/x-www-form-urlencoded',
  ...extra,
});

describe('CSRF', () => {
  beforeEach(async () => {
    web = await startTestWeb();
  });

  it('a form post with the session token acknowledges; PRG redirect to the alarm page', async () => {
    const s = await session(web.app, 'otto');
    const res = await web.app.inject({ method: 'POST', url: '/alarms/7/ack', headers: formHeaders(s.cookie), payload: new URLSearchParams({ csrf: s.csrf, note: 'going now' }).toString() });
    expect(res.statusCode).toBe(303);
    expect(res.headers.location).toBe('/alarms/7?done=ack');
    expect(web.site.calls).toEqual([{ command: 'acknowledge', args: [7, 'otto', 'going now'] }]);
  });

  it('refuses a form post without the token, with a wrong one, or with another session\'s', async () => {
    const s = await session(web.app, 'otto');
    const other = await session(web.app, 'ada');
    for (const payload of ['note=x', 'csrf=&note=x', 'csrf=forged-value&note=x', `csrf=${encodeURIComponent(other.csrf)}&note=x`]) {
      const res = await web.app.inject({ method: 'POST', url: '/alarms/7/ack', headers: formHeaders(s.cookie), payload });
      expect(res.statusCode, payload).toBe(403);
      expect(res.body).toContain('PW_WEB_CSRF');
    }
    expect(web.site.calls).toEqual([]);
  });

  it('refuses a post from another origin even with the right token', async () => {
    const s = await session(web.app, 'otto');
    const payload = new URLSearchParams({ csrf: s.csrf }).toString();
    const foreign = await web.app.inject({ method: 'POST', url: '/alarms/7/ack', headers: formHeaders(s.cookie, { origin: 'https://evil.example' }), payload });
    expect(foreign.statusCode).toBe(403);
    const crossSite = await web.app.inject({ method: 'POST', url: '/alarms/7/ack', headers: formHeaders(s.cookie, { 'sec-fetch-site': 'cross-site' }), payload });
    expect(crossSite.statusCode).toBe(403);
    const nullCrossSite = await web.app.inject({
      method: 'POST',
      url: '/alarms/7/ack',
      headers: formHeaders(s.cookie, { origin: 'null', 'sec-fetch-site': 'cross-site' }),
      payload,
    });
    expect(nullCrossSite.statusCode).toBe(403);
    const nullNoToken = await web.app.inject({ method: 'POST', url: '/alarms/7/ack', headers: formHeaders(s.cookie, { origin: 'null' }), payload: 'note=x' });
    expect(nullNoToken.statusCode).toBe(403);
    expect(web.site.calls).toEqual([]);
    // Chromium sends "Origin: null" on same-site form posts under Referrer-Policy no-referrer.
    const nullSameOrigin = await web.app.inject({
      method: 'POST',
      url: '/alarms/8/ack',
      headers: formHeaders(s.cookie, { origin: 'null', 'sec-fetch-site': 'same-origin' }),
      payload,
    });
    expect(nullSameOrigin.statusCode).toBe(409);
    const own = await web.app.inject({
      method: 'POST',
      url: '/alarms/7/ack',
      headers: formHeaders(s.cookie, { origin: 'http://localhost:80', host: 'localhost:80', 'sec-fetch-site': 'same-origin' }),
      payload,
    });
    expect(own.statusCode).toBe(303);
  });

  it('API posts with a session cookie need the token in X-CSRF-Token; bearer tokens do not', async () => {
    const s = await session(web.app, 'otto');
    const bare = await web.app.inject({ method: 'POST', url: '/api/v1/alarms/7/ack', headers: { cookie: s.cookie } });
    expect(bare.statusCode).toBe(403);
    expect(bare.json().error).toMatchObject({ code: 'PW_WEB_CSRF', field: 'csrf' });
    const withToken = await web.app.inject({ method: 'POST', url: '/api/v1/alarms/7/ack', headers: { cookie: s.cookie, 'x-csrf-token': s.csrf } });
    expect(withToken.statusCode).toBe(200);
  });

  it('the sign-in form has its own token: a post without the form cookie is refused', async () => {
    const page = await web.app.inject({ method: 'GET', url: '/login' });
    const res = await web.app.inject({
      method: 'POST',
      url: '/login',
      headers: { 'content-type': 'application/x-www-form-urlencoded' },
      payload: new URLSearchParams({ csrf: csrfFrom(page.body), name: 'otto', password: USERS.otto.password }).toString(),
    });
    expect(res.statusCode).toBe(403);
    expect(cookieFrom(res, 'pw_session')).toBeUndefined();
  });

  it('sign-out needs the token too', async () => {
    const s = await session(web.app, 'otto');
    const res = await web.app.inject({ method: 'POST', url: '/logout', headers: formHeaders(s.cookie), payload: 'csrf=wrong' });
    expect(res.statusCode).toBe(403);
    expect((await web.app.inject({ method: 'GET', url: '/', headers: { cookie: s.cookie } })).statusCode).toBe(200);
  });
});

describe('sign-in rate limit (web.login_attempts_per_minute = 5)', () => {
  beforeEach(async () => {
    web = await startTestWeb();
  });

  it('after 5 failures from one address, the 6th attempt is refused with 429 even with the right password', async () => {
    for (let i = 0; i < 5; i++) expect((await signIn(web.app, 'otto', 'wrong-guess-' + i, '192.0.2.7')).statusCode).toBe(401);
    const blocked = await signIn(web.app, 'otto', USERS.otto.password, '192.0.2.7');
    expect(blocked.statusCode).toBe(429);
    expect(blocked.headers['retry-after']).toBe('60');
    expect(cookieFrom(blocked, 'pw_session')).toBeUndefined();
    // Another name from the same address is also blocked (per-address limit).
    expect((await signIn(web.app, 'ada', USERS.ada.password, '192.0.2.7')).statusCode).toBe(429);
    // A minute later the window has passed.
    web.clock.now += 60_001;
    expect((await signIn(web.app, 'otto', USERS.otto.password, '192.0.2.7')).statusCode).toBe(303);
  });

  it('failures for one name lock it only for addresses that failed: a clean address still signs in (issue 9)', async () => {
    for (let i = 0; i < 5; i++) await signIn(web.app, 'ada', 'wrong', `198.51.100.${i + 1}`);
    // A guessing address that has failed gets no more tries at the name, even with the right password …
    expect((await signIn(web.app, 'ada', USERS.ada.password, '198.51.100.1')).statusCode).toBe(429);
    // … but the real user from an address that has not failed is not locked out.
    expect((await signIn(web.app, 'ada', USERS.ada.password, '198.51.100.200')).statusCode).toBe(303);
    // Other users are unaffected.
    expect((await signIn(web.app, 'vera', USERS.vera.password, '198.51.100.201')).statusCode).toBe(303);
  });

  it('one address flooding one name does not lock the user out from another address (issue 9)', async () => {
    for (let i = 0; i < 20; i++) await signIn(web.app, 'otto', `guess-${i}`, '203.0.113.66');
    expect((await signIn(web.app, 'otto', USERS.otto.password, '192.0.2.44')).statusCode).toBe(303);
  });

  it('parallel wrong passwords are counted before hashing: at most the limit are checked (issue 9)', async () => {
    const forms = await Promise.all(Array.from({ length: 40 }, () => web.app.inject({ method: 'GET', url: '/login', remoteAddress: '192.0.2.99' })));
    const answers = await Promise.all(
      forms.map((form, i) =>
        web.app.inject({
          method: 'POST',
          url: '/login',
          remoteAddress: '192.0.2.99',
          headers: { cookie: `pw_login=${cookieFrom(form, 'pw_login')}`, 'content-type': 'application/x-www-form-urlencoded' },
          payload: new URLSearchParams({ csrf: csrfFrom(form.body), name: 'otto', password: `parallel-${i}`, next: '/' }).toString(),
        }),
      ),
    );
    const codes = answers.map((a) => a.statusCode);
    expect(codes.filter((c) => c === 401)).toHaveLength(5);
    expect(codes.filter((c) => c === 429)).toHaveLength(35);
    expect(listLoginFailures(web.db).filter((f) => f.ip === '192.0.2.99')).toHaveLength(5);
  });

  it('a right password takes its reserved attempt back', async () => {
    for (let i = 0; i < 10; i++) expect((await signIn(web.app, 'otto', USERS.otto.password, '192.0.2.5')).statusCode).toBe(303);
    expect(listLoginFailures(web.db)).toEqual([]);
  });

  it('the failed sign-in log lines carry whether the name exists, never the name typed (issue 9)', async () => {
    const lines: string[] = [];
    await web.close();
    web = await startTestWeb({ logger: pino({ level: 'info' }, { write: (line: string) => lines.push(line) }) });
    const secretLike = 'Hunter2-typed-into-name';
    for (let i = 0; i < 6; i++) await signIn(web.app, secretLike, 'x-password', '192.0.2.8');
    await signIn(web.app, 'otto', 'x-password', '192.0.2.9');
    expect(lines.join('\n')).not.toContain(secretLike);
    const entries = lines.map((l) => JSON.parse(l) as { msg: string; ip?: string; knownName?: boolean });
    expect(entries.filter((e) => e.msg === 'sign-in failed').map((e) => [e.ip, e.knownName])).toEqual([
      ...Array.from({ length: 5 }, () => ['192.0.2.8', false]),
      ['192.0.2.9', true],
    ]);
    expect(entries.some((e) => e.msg.startsWith('sign-in refused'))).toBe(true);
  });
});

describe('security headers', () => {
  beforeEach(async () => {
    web = await startTestWeb();
  });

  it('every kind of response carries them', async () => {
    const s = await session(web.app, 'vera');
    const responses = await Promise.all([
      web.app.inject({ method: 'GET', url: '/', headers: { cookie: s.cookie } }),
      web.app.inject({ method: 'GET', url: '/login' }),
      web.app.inject({ method: 'GET', url: '/api/v1/loops', headers: { authorization: `Bearer ${web.tokens.viewer}` } }),
      web.app.inject({ method: 'GET', url: '/api/v1/loops' }),
      web.app.inject({ method: 'GET', url: '/no/such/page', headers: { cookie: s.cookie } }),
      web.app.inject({ method: 'GET', url: '/healthz' }),
      web.app.inject({ method: 'GET', url: '/static/board.js' }),
      web.app.inject({ method: 'GET', url: '/ack/garbage' }),
    ]);
    for (const res of responses) {
      const csp = String(res.headers['content-security-policy']);
      // CSP Level 3: no 'unsafe-inline' anywhere; scripts only from this origin; no framing.
      expect(csp).toContain("script-src 'self'");
      expect(csp).toContain("frame-ancestors 'none'");
      expect(csp).not.toContain('unsafe-inline');
      expect(res.headers['x-content-type-options']).toBe('nosniff');
      expect(res.headers['referrer-policy']).toBe('no-referrer');
      expect(res.headers['x-frame-options']).toBe('DENY');
      expect(res.headers['strict-transport-security']).toBeUndefined();
    }
  });

  it('pages contain no inline script or style attribute, only /static scripts', async () => {
    const s = await session(web.app, 'otto');
    for (const url of ['/', '/alarms/7', '/loops/seed-store', '/history', '/login']) {
      const res = await web.app.inject({ method: 'GET', url, headers: url === '/login' ? {} : { cookie: s.cookie } });
      expect(res.statusCode, url).toBe(200);
      const scripts = [...res.body.matchAll(/<script\b([^>]*)>([\s\S]*?)<\/script>/g)];
      for (const [, attrs, content] of scripts) {
        expect(attrs, url).toMatch(/src="\/static\//);
        expect(content, url).toBe('');
      }
      expect(res.body, url).not.toMatch(/\sstyle="/);
      expect(res.body, url).not.toMatch(/\son[a-z]+="/);
    }
  });

  it('the static script and stylesheet are served with their types and revalidate by ETag', async () => {
    const js = await web.app.inject({ method: 'GET', url: '/static/board.js' });
    expect(js.headers['content-type']).toMatch(/^text\/javascript/);
    expect(js.body).toContain("new EventSource('/events/stream')");
    const again = await web.app.inject({ method: 'GET', url: '/static/board.js', headers: { 'if-none-match': String(js.headers.etag) } });
    expect(again.statusCode).toBe(304);
    const css = await web.app.inject({ method: 'GET', url: '/static/site.css' });
    expect(css.headers['content-type']).toMatch(/^text\/css/);
  });
});

describe('over https (public_url)', () => {
  it('session cookies are Secure when people reach the server by https', async () => {
    web = await startTestWeb({ config: testConfig({ web: { listen: '127.0.0.1:0', public_url: 'https://monitor.larkfield.example' } }) });
    const res = await signIn(web.app, 'otto', USERS.otto.password);
    const cookie = (res.cookies as Array<Record<string, unknown>>).find((c) => c.name === 'pw_session')!;
    expect(cookie.secure).toBe(true);
    // A form from the public origin is accepted.
    const s = { cookie: `pw_session=${String(cookie.value)}` };
    const board = await web.app.inject({ method: 'GET', url: '/', headers: { cookie: s.cookie } });
    const ok = await web.app.inject({
      method: 'POST',
      url: '/alarms/7/ack',
      headers: formHeaders(s.cookie, { origin: 'https://monitor.larkfield.example' }),
      payload: `csrf=${encodeURIComponent(csrfFrom(board.body))}`,
    });
    expect(ok.statusCode).toBe(303);
  });
});
