import { decodeHTML } from 'entities';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { escapeHtml, html } from '../../src/web/pages/html.js';
import { HOSTILE_NAME } from './fixtures/fakeSite.js';
import { session, startTestWeb, type TestWeb } from './fixtures/testWeb.js';

describe('html helper', () => {
  it('escapes the five characters the HTML spec gives meaning in text and attributes (decoded back by the "entities" library, the HTML parser htmlparser2 uses)', () => {
    const nasty = `<a href="x" onclick='y'>&amp;</a>\``;
    const escaped = escapeHtml(nasty);
    expect(escaped).not.toMatch(/[<>"'`]/);
    expect(decodeHTML(escaped)).toBe(nasty);
  });

  it('escapes interpolations but not nested html results', () => {
    const inner = html`<b>${'<i>'}</b>`;
    expect(html`<p>${inner}${['<', html`<br>`]}${null}${undefined}${false}${0}</p>`.value).toBe('<p><b>&lt;i&gt;</b>&lt;<br>0</p>');
  });
});

describe('hostile text on every page', () => {
  let web: TestWeb;
  beforeEach(async () => {
    web = await startTestWeb({ hostileName: true });
  });
  afterEach(async () => {
    await web.close();
  });

  it('a loop name and a note full of markup are shown as text everywhere', async () => {
    const s = await session(web.app, 'otto');
    const hostileNote = `</textarea><script>alert('note')</script>"><svg onload=alert(2)>`;
    await web.app.inject({
      method: 'POST',
      url: '/alarms/7/ack',
      headers: { cookie: s.cookie, 'content-type': 'application/x-www-form-urlencoded' },
      payload: new URLSearchParams({ csrf: s.csrf, note: hostileNote }).toString(),
    });
    web.site.loops[3]!.serviceNote = hostileNote;
    web.site.loops[3]!.inService = false;
    web.site.events[0]!.summary = hostileNote;

    for (const url of ['/', '/board/list', '/alarms/7', '/loops/seed-store', '/loops/glasshouse', '/history']) {
      const res = await web.app.inject({ method: 'GET', url, headers: { cookie: s.cookie } });
      expect(res.statusCode, url).toBe(200);
      expect(res.body, url).not.toContain('<script>alert');
      expect(res.body, url).not.toContain('<img src=x');
      expect(res.body, url).not.toContain('<svg onload');
      expect(res.body, url).not.toContain('</textarea><script>');
    }
    const alarmPage = (await web.app.inject({ method: 'GET', url: '/alarms/7', headers: { cookie: s.cookie } })).body;
    expect(alarmPage).toContain(escapeHtml(HOSTILE_NAME));
    expect(alarmPage).toContain(escapeHtml(hostileNote));
  });

  it('the API returns the same text as data, untouched', async () => {
    const res = await web.app.inject({ method: 'GET', url: '/api/v1/loops/seed-store', headers: { authorization: `Bearer ${web.tokens.viewer}` } });
    expect(res.json().name).toBe(HOSTILE_NAME);
  });

  it('an error page does not echo markup from the address', async () => {
    const s = await session(web.app, 'vera');
    const res = await web.app.inject({ method: 'GET', url: '/loops/%3Cscript%3Ex%3C%2Fscript%3E', headers: { cookie: s.cookie } });
    expect(res.statusCode).toBe(404);
    expect(res.body).not.toContain('<script>x');
    const route = await web.app.inject({ method: 'GET', url: '/nope/%3Cimg%20src=x%3E', headers: { cookie: s.cookie } });
    expect(route.statusCode).toBe(404);
    expect(route.body).not.toContain('<img src=x>');
  });
});
