import { validateHeaderValue } from 'node:http';
import fc from 'fast-check';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { foldFreeText, freeTextProblem } from '../../src/web/http/freeText.js';
import { allowedHostNames, hostAllowed } from '../../src/web/http/hostCheck.js';
import { safeNextPath } from '../../src/web/http/requestKind.js';
import { cookieFrom, csrfFrom, form, session, startTestWeb, testConfig, USERS, type TestWeb } from './fixtures/testWeb.js';

/**
 * The input rules of issue 9, each tested as a rule over many inputs (fast-check), and then through the
 * server: `next=` after sign-in (items 3, 4), free text (6, 11) and the Host check (10).
 */

// Pieces an attacker combines: slashes both ways, the characters browsers strip (WHATWG URL: tab, LF,
// CR), other controls, Unicode line breaks and direction marks, a scheme, a host, encodings.
const PIECES = ['/', '\\', '\t', '\n', '\r', '\u0000', '\u007f', '\u0085', '\u2028', '\u2029', '\u202e', '.', '..', '%09', '%5C', '%2F', 'evil.example', 'javascript:', 'http:', '@', ':', '?', '#', 'alarms', '7', ' ', 'é', '\uD800'];
const attack = fc.array(fc.constantFrom(...PIECES), { maxLength: 8 }).map((parts) => parts.join(''));
const anyText = fc.oneof(attack, fc.string({ unit: 'binary', maxLength: 40 }), attack.map((s) => `/${s}`));

const ORIGINS = ['http://monitor.local:8080', 'https://farm.example', 'http://127.0.0.1:8080', 'http://[::1]:8080'];

describe('next= rule: the result stays on this server, is a valid Location header, for any input', () => {
  it('holds over many crafted and random inputs', () => {
    fc.assert(
      fc.property(anyText, (input) => {
        const out = safeNextPath(input);
        expect(out === '/' || out === input).toBe(true);
        // RFC 9110 §5.5 field values; Node's own check is what threw ERR_INVALID_CHAR before.
        expect(() => validateHeaderValue('location', out)).not.toThrow();
        expect(/[\u0000-\u0020\u007f-\uffff]/.test(out)).toBe(false);
        // Resolved the way a browser resolves a Location (WHATWG URL), it never leaves the origin.
        for (const origin of ORIGINS) expect(new URL(out, origin).origin).toBe(origin);
      }),
      { numRuns: 3000 },
    );
  });

  it.each(['/\t/evil.example/x', '/\\evil.example', '/\t\\evil.example', '//evil.example', '/\\/evil.example', '/\n/evil.example', 'https://evil.example', 'javascript:alert(1)', '/a\u0000b', '/a\u007fb', '/a\u2028b', '/é'])(
    'refuses %j',
    (input) => {
      expect(safeNextPath(input)).toBe('/');
    },
  );

  it.each(['/', '/alarms/7', '/history?loop=hen-house&priority=alarm', '/loops/seed-store#chart', '/%09/x'])('keeps %j', (input) => {
    expect(safeNextPath(input)).toBe(input);
  });
});

describe('free-text rule: folded line breaks, refused controls, nothing cut', () => {
  const REFUSED_CLASS = /[\p{Cc}\u202a-\u202e\u2066-\u2069\u200e\u200f\u061c]|\p{Cs}/u;
  it('holds over many inputs', () => {
    fc.assert(
      fc.property(fc.oneof(attack, fc.string({ unit: 'binary', maxLength: 60 }), fc.string({ unit: 'grapheme', maxLength: 30 })), (input) => {
        const folded = foldFreeText(input);
        expect(/[\r\n\t\u2028\u2029]/.test(folded)).toBe(false);
        const problem = freeTextProblem(folded);
        // Refused exactly when something other than a line break or tab is a control, direction mark or lone surrogate.
        expect(problem !== null).toBe(REFUSED_CLASS.test(folded));
        // Accepted text is the input with only its line breaks changed: never shortened (a NUL used to cut it).
        if (problem === null) expect(folded.replace(/ /g, '')).toBe(input.replace(/[\r\n\t\u2028\u2029 ]/g, ''));
      }),
      { numRuns: 3000 },
    );
  });
});

describe('host rule', () => {
  const allowed = allowedHostNames('farm-monitor.local:8080', 'https://monitor.farm.example/', ['Barn-PC']);
  it('accepts configured names, localhost and IP literals, with or without a port; refuses every other name', () => {
    for (const host of ['farm-monitor.local:8080', 'monitor.farm.example', 'MONITOR.farm.example:443', 'barn-pc', 'localhost:8080', 'localhost.', '127.0.0.1:8080', '192.168.1.20', '[::1]:8080', '[fe80::1]']) {
      expect(hostAllowed(host, allowed), host).toBe(true);
    }
    for (const host of [undefined, '', 'evil.example', 'evil.example:8080', 'monitor.farm.example.evil.example', '127.0.0.1.evil.example', 'localhost.evil.example', '[::1', 'a b', '1.2.3.4:80:80']) {
      expect(hostAllowed(host, allowed), String(host)).toBe(false);
    }
  });

  it('over random names: allowed exactly when configured or an IP literal', () => {
    const label = fc.stringMatching(/^[a-z][a-z0-9-]{0,10}$/);
    fc.assert(
      fc.property(fc.array(label, { minLength: 1, maxLength: 4 }), fc.option(fc.integer({ min: 1, max: 65535 })), (labels, port) => {
        const name = labels.join('.');
        const header = port === null ? name : `${name}:${port}`;
        const expected = allowed.has(name);
        expect(hostAllowed(header, allowed)).toBe(expected);
      }),
      { numRuns: 1000 },
    );
  });
});

describe('through the server', () => {
  let web: TestWeb;
  beforeEach(async () => {
    web = await startTestWeb({
      config: testConfig({ web: { listen: '127.0.0.1:0', public_url: 'https://monitor.farm.example', allowed_hosts: ['barn-pc'], login_attempts_per_minute: 1000, max_shelve: '24h' } }),
    });
  });
  afterEach(async () => {
    await web.close();
  });

  const sessionsCount = () => (web.db.prepare('SELECT count(*) AS n FROM web_sessions').get() as { n: number }).n;

  it('sign-in with any next= never answers 5xx, redirects on this server, and leaves exactly one session per sign-in', async () => {
    await fc.assert(
      fc.asyncProperty(anyText.map((t) => t.replace(/\p{Cs}/gu, '\uFFFD')), async (next) => {
        const before = sessionsCount();
        const page = await web.app.inject({ method: 'GET', url: `/login?next=${encodeURIComponent(next)}` });
        expect(page.statusCode).toBe(200);
        const res = await web.app.inject({
          method: 'POST',
          url: '/login',
          headers: { cookie: `pw_login=${cookieFrom(page, 'pw_login')}`, 'content-type': 'application/x-www-form-urlencoded' },
          payload: new URLSearchParams({ csrf: csrfFrom(page.body), name: 'vera', password: USERS.vera.password, next }).toString(),
        });
        expect(res.statusCode).toBe(303);
        const location = String(res.headers.location);
        expect(new URL(location, 'http://localhost').origin).toBe('http://localhost');
        expect(sessionsCount()).toBe(before + 1);
        // Signed in already, GET /login?next= redirects at once: the same rule applies.
        const again = await web.app.inject({ method: 'GET', url: `/login?next=${encodeURIComponent(next)}`, headers: { cookie: `pw_session=${cookieFrom(res, 'pw_session')}` } });
        expect(again.statusCode).toBe(303);
        expect(new URL(String(again.headers.location), 'http://localhost').origin).toBe('http://localhost');
      }),
      { numRuns: 120 },
    );
  });

  it('notes and reasons: folded or refused with a 400 naming the field, in the API and the page forms, for any text', async () => {
    const s = await session(web.app, 'otto');
    const auth = { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'application/json' };
    await fc.assert(
      fc.asyncProperty(fc.oneof(attack, fc.string({ unit: 'binary', maxLength: 40 })), async (text) => {
        const calls = web.site.calls.length;
        const api = await web.app.inject({ method: 'POST', url: '/api/v1/alarms/4040/ack', headers: auth, payload: JSON.stringify({ note: text }) });
        const page = await web.app.inject({ method: 'POST', url: '/alarms/4040/shelve', headers: { cookie: s.cookie, ...form({}).headers }, payload: form({ csrf: s.csrf, minutes: '30', reason: text }).payload });
        const problem = freeTextProblem(foldFreeText(text));
        // A form body is UTF-8 on the wire: a lone surrogate arrives as U+FFFD there (JSON can escape one).
        const formProblem = freeTextProblem(foldFreeText(text.replace(/\p{Cs}/gu, '\uFFFD')));
        // A shelve reason is required: blank after folding is a 400 too.
        const blank = foldFreeText(text.replace(/\p{Cs}/gu, '\uFFFD')).trim() === '';
        expect(page.statusCode).toBe(formProblem || blank ? 400 : 404);
        if (problem) {
          expect(api.statusCode).toBe(400);
          expect(api.json()).toMatchObject({ error: { code: 'PW_WEB_BAD_INPUT', field: 'note' } });
          if (formProblem) expect(web.site.calls.length).toBe(calls);
        } else {
          // Alarm 4040 does not exist: reaching the command (404) proves the text was let through.
          expect(api.statusCode).toBe(404);
          for (const call of web.site.calls.slice(calls)) {
            for (const arg of call.args) if (typeof arg === 'string') expect(/[\r\n\u2028\u2029\p{Cc}]/u.test(arg)).toBe(false);
          }
        }
        expect(api.statusCode).toBeLessThan(500);
        expect(page.statusCode).toBeLessThan(500);
      }),
      { numRuns: 150 },
    );
  });

  it('a forged mail line in a note reaches the command folded into one line', async () => {
    const auth = { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'application/json' };
    const res = await web.app.inject({ method: 'POST', url: '/api/v1/alarms/7/ack', headers: auth, payload: JSON.stringify({ note: 'ok\r\n  Acknowledge:    http://evil.example/x' }) });
    expect(res.statusCode).toBe(200);
    expect(web.site.calls.at(-1)).toEqual({ command: 'acknowledge', args: [7, 'token:script-operator', 'ok   Acknowledge:    http://evil.example/x'] });
  });

  it.each(['a\u0000b', 'a\uD800b', 'x\u202Ey'])('refuses %j in a note rather than storing it cut or broken', async (note) => {
    const res = await web.app.inject({ method: 'POST', url: '/api/v1/alarms/7/ack', headers: { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'application/json' }, payload: JSON.stringify({ note }) });
    expect(res.statusCode).toBe(400);
    expect(res.json().error.field).toBe('note');
    expect(web.site.calls).toEqual([]);
  });

  it('answers a foreign Host with 421 and the security headers, before any credential is looked at', async () => {
    for (const host of ['evil.example', 'evil.example:8080', 'rebind.attacker.example']) {
      for (const url of ['/', '/login', '/api/v1/loops', '/metrics', '/healthz']) {
        const res = await web.app.inject({ method: 'GET', url, headers: { host, authorization: `Bearer ${web.tokens.admin}` } });
        expect(res.statusCode, `${host} ${url}`).toBe(421);
        expect(res.headers['content-security-policy']).toBeDefined();
        expect(res.body).not.toContain('Larkfield');
      }
    }
    for (const host of ['localhost:8080', '127.0.0.1:8080', 'monitor.farm.example', 'barn-pc:8080', '[::1]:8080']) {
      const res = await web.app.inject({ method: 'GET', url: '/api/v1/loops', headers: { host, authorization: `Bearer ${web.tokens.viewer}` } });
      expect(res.statusCode, host).toBe(200);
    }
  });
});
