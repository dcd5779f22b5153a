import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { CONDITION_TEXT } from '../../src/model/condition.js';
import { escapeHtml } from '../../src/web/pages/html.js';
import { pageCalls, session, startTestWeb, type Session, type TestWeb } from './fixtures/testWeb.js';

let web: TestWeb;
let otto: Session;
beforeEach(async () => {
  web = await startTestWeb();
  otto = await session(web.app, 'otto');
});
afterEach(async () => {
  await web.close();
});

const { page, postForm } = pageCalls(() => web, () => otto);

describe('the board', () => {
  it('lists every loop: alarms first, then trouble, then healthy, each with state words and a shape', async () => {
    const res = await page('/');
    expect(res.statusCode).toBe(200);
    const body = res.body;
    const order = ['Seed store', 'Pump shed', 'Glasshouse', 'Hen house'].map((name) => body.indexOf(`<span class="card-name">${name}</span>`));
    expect(order.every((i) => i > 0)).toBe(true);
    expect(order[0]).toBeLessThan(order[1]!);
    expect(order[1]).toBeLessThan(order[2]!);
    expect(body.indexOf('Alarm (1)')).toBeLessThan(body.indexOf('Trouble (1)'));
    expect(body.indexOf('Trouble (1)')).toBeLessThan(body.indexOf('Healthy (2)'));
    expect(body).toContain('<span class="card-state">Tripped</span>');
    expect(body).toContain('<span class="card-state">Open circuit</span>');
    expect(body).toMatch(/class="shape shape-tripped"/);
    expect(body).toMatch(/class="shape shape-open"/);
    expect(body).toMatch(/class="shape shape-healthy"/);
    // since when, and the age of the last pulse
    expect(body).toContain('since 19:48 (12 min)');
    expect(body).toContain('last pulse just now');
    // the system trouble without a loop is listed too, and links to its alarm
    expect(body).toContain('href="/alarms/9"');
    // the live script, and a refresh for browsers without it
    expect(body).toContain('<script src="/static/board.js" defer></script>');
    expect(body).toContain('<noscript><meta http-equiv="refresh" content="30"></noscript>');
  });

  it('each state draws a different shape', async () => {
    const { stateShape } = await import('../../src/web/pages/stateShape.js');
    const states = ['healthy', 'tripped', 'open', 'shorted', 'offline', 'unknown', 'out-of-service', 'back-to-normal'] as const;
    const drawings = states.map((s) => stateShape(s).value.replace(/class="[^"]*"/, ''));
    expect(new Set(drawings).size).toBe(states.length);
  });

  it('the fragment is the list alone', async () => {
    const res = await page('/board/list');
    expect(res.statusCode).toBe(200);
    expect(res.body).not.toContain('<html');
    expect(res.body).toContain('Seed store');
  });

  it('cautions the reader that this is property monitoring, not life safety', async () => {
    expect((await page('/')).body).toContain('not a life-safety system');
  });
});

describe('the alarm page', () => {
  it('says what, where, since when, what to check, who was told, the trail, and offers the forms', async () => {
    const res = await page('/alarms/7');
    expect(res.statusCode).toBe(200);
    const body = res.body;
    expect(body).toContain(escapeHtml(CONDITION_TEXT.tripped.words));
    expect(body).toContain(escapeHtml(CONDITION_TEXT.tripped.check));
    expect(body).toContain('Old granary');
    expect(body).toContain('<time datetime="2026-12-01T19:48:00.000Z">19:48</time>');
    expect(body).toContain('Kitchen tablet');
    // People's words, not the action code or the monitor's own name for itself (issue 9, item 19).
    expect(body).toContain('<b>raised</b>');
    expect(body).not.toContain('<b>raise</b>');
    expect(body).toContain('action="/alarms/7/ack"');
    expect(body).toContain('action="/alarms/7/shelve"');
    expect(body).toContain('name="note"');
  });

  it('a viewer sees it without the forms', async () => {
    const vera = await session(web.app, 'vera');
    const body = (await page('/alarms/7', vera)).body;
    expect(body).not.toContain('action="/alarms/7/ack"');
    expect(body).toContain('your role is viewer');
  });

  it('acknowledge with a note, then the page says so (POST-redirect-GET)', async () => {
    const res = await postForm('/alarms/7/ack', { note: 'heater on' });
    expect(res.statusCode).toBe(303);
    const after = await page(res.headers.location as string);
    expect(after.body).toContain('Acknowledged.');
    expect(after.body).toContain('by otto: “heater on”');
    expect(after.body).not.toContain('action="/alarms/7/ack"');
  });

  it('shelve needs a reason and a number of minutes within web.max_shelve', async () => {
    const noReason = await postForm('/alarms/7/shelve', { minutes: '60' });
    expect(noReason.statusCode).toBe(400);
    expect(noReason.body).toContain('reason: is required');
    const tooLong = await postForm('/alarms/7/shelve', { minutes: '1441', reason: 'x' });
    expect(tooLong.statusCode).toBe(400);
    expect(tooLong.body).toContain('minutes: must be a whole number of minutes from 1 to 1440');
    const ok = await postForm('/alarms/7/shelve', { minutes: '60', reason: 'thermostat test' });
    expect(ok.statusCode).toBe(303);
    expect((await page('/alarms/7')).body).toContain('action="/alarms/7/unshelve"');
    const un = await postForm('/alarms/7/unshelve', {});
    expect(un.statusCode).toBe(303);
    expect(web.site.calls.map((c) => c.command)).toEqual(['shelve', 'unshelve']);
  });

  it('unknown or malformed alarm ids get plain pages', async () => {
    const unknown = await page('/alarms/4242');
    expect(unknown.statusCode).toBe(404);
    expect(unknown.headers['content-type']).toMatch(/^text\/html/);
    expect(unknown.body).toContain('no alarm has id &quot;4242&quot;');
    const malformed = await page('/alarms/abc');
    expect(malformed.statusCode).toBe(400);
    expect(malformed.body).toContain('id: must be a positive whole number');
    const refused = await postForm('/alarms/8/ack', {});
    expect(refused.statusCode).toBe(409);
  });
});

describe('the loop page', () => {
  it('draws the 24 h timeline as inline SVG with state lanes and the interval trace', async () => {
    const res = await page('/loops/seed-store');
    expect(res.statusCode).toBe(200);
    const svg = /<svg viewBox="0 0 400 \d+" role="img"[\s\S]*?<\/svg>/.exec(res.body)?.[0];
    expect(svg).toBeDefined();
    // The lanes use the same words as the board's states (issue 9, item 19).
    for (const lane of ['Healthy', 'Tripped', 'Open circuit', 'Short circuit', 'Decoder offline', 'Not known yet']) expect(svg).toContain(`>${lane}</text>`);
    expect(svg).toContain('<polyline');
    expect(svg).toContain('<polygon');
    // The fixture's gap (minutes 601–639 without pulses) splits the trace in two.
    expect(svg!.match(/<polyline/g)).toHaveLength(2);
    expect(res.body).toContain('Line quality');
    expect(res.body).toContain('<dt>Lost frames</dt><dd>3</dd>');
    // 10 h healthy + (13.4 h - 12 min) healthy = 23 h 12 min; 36 min open; 12 min tripped.
    expect(res.body).toContain('healthy 23 h 12 min, tripped 12 min, open circuit 36 min');
  });

  it('takes the loop out of service and back, with a required reason', async () => {
    const missing = await postForm('/loops/glasshouse/out-of-service', {});
    expect(missing.statusCode).toBe(400);
    expect(missing.body).toContain('note: is required');
    const out = await postForm('/loops/glasshouse/out-of-service', { note: 'reglazing' });
    expect(out.statusCode).toBe(303);
    expect(out.headers.location).toBe('/loops/glasshouse?done=oos');
    const shown = await page('/loops/glasshouse?done=oos');
    expect(shown.body).toContain('Taken out of service.');
    expect(shown.body).toContain('action="/loops/glasshouse/return-to-service"');
    const board = await page('/');
    expect(board.body).toContain('Out of service (1)');
    expect((await postForm('/loops/glasshouse/return-to-service', {})).statusCode).toBe(303);
  });

  it('404 for an unknown loop', async () => {
    expect((await page('/loops/nowhere')).statusCode).toBe(404);
  });
});

describe('history', () => {
  it('lists events with filters by loop, priority and period, and pages', async () => {
    const all = await page('/history?period=all');
    expect(all.statusCode).toBe(200);
    expect(all.body.match(/<li class="event/g)).toHaveLength(100);
    expect(all.body).toContain('>Older</a>');
    const filtered = await page('/history?loop=pump-shed&priority=alarm&period=all');
    const items = filtered.body.match(/<li class="event[^"]*"/g) ?? [];
    expect(items.length).toBeGreaterThan(0);
    expect(items.every((li) => li.includes('event-alarm'))).toBe(true);
    expect(filtered.body).toContain('<option value="pump-shed" selected>');
    // 24 h at one event per 10 min: 145 events in [now-24h, now], first page of 100.
    const day = await page('/history?period=24h');
    expect(day.body.match(/<li class="event/g)).toHaveLength(100);
  });

  it('exact times are read in the site time zone (Europe/London is UTC+0 in December)', async () => {
    const res = await page('/history?from=2026-12-01T19:00&to=2026-12-01T19:31');
    // Events every 10 minutes from 20:00Z backwards: 19:30, 19:20, 19:10, 19:00.
    expect(res.body.match(/<li class="event/g)).toHaveLength(4);
  });

  it('bad filters are a 400 naming the filter', async () => {
    for (const [query, text] of [
      ['loop=nowhere', 'loop: no loop has id'],
      ['priority=urgent', 'priority: must be alarm, trouble or system'],
      ['period=forever', 'period: must be one of'],
      ['from=yesterday', 'from: must be a date and time'],
      ['from=2026-12-02T00:00&to=2026-12-01T00:00', 'to: must be later than the start'],
      ['colour=red', 'colour: is not a filter'],
    ] as const) {
      const res = await page(`/history?${query}`);
      expect(res.statusCode, query).toBe(400);
      expect(res.body, query).toContain(escapeHtml(text));
    }
  });

  it('exports CSV (RFC 4180: CRLF, quoted fields), all pages, with formula cells defused', async () => {
    const res = await page('/history.csv?period=all');
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toMatch(/^text\/csv/);
    expect(res.headers['content-disposition']).toBe('attachment; filename="pairwatch-history-2026-12-01.csv"');
    const lines = res.body.split('\r\n');
    expect(lines[0]).toBe('time_utc,time_local_Europe/London,loop,kind,priority,summary,actor,from_state,to_state');
    expect(lines.at(-1)).toBe('');
    expect(lines).toHaveLength(1 + 250 + 1);
    expect(lines[1]).toBe('2026-12-01T20:00:00.000Z,2026-12-01 20:00:00,hen-house,audit,alarm,"Tripped: acknowledged by otto: “checked, event 250”",otto,,');
    expect(lines[2]).toBe(`2026-12-01T19:50:00.000Z,2026-12-01 19:50:00,seed-store,state-change,trouble,"Tripped (was healthy): =HYPERLINK(""http://x"") ""quoted"", with comma",,healthy,tripped`);
  });
});

describe('page errors', () => {
  it('an unknown page is a 404 page, not JSON', async () => {
    const res = await page('/nothing/here');
    expect(res.statusCode).toBe(404);
    expect(res.headers['content-type']).toMatch(/^text\/html/);
    expect(res.body).toContain('Not found');
  });

  it('a handler failure is a plain 500 page without internals', async () => {
    web.site.read.loops = () => {
      throw new Error('SQLITE_CORRUPT at /opt/pairwatch/x.js:1:2');
    };
    const res = await page('/');
    expect(res.statusCode).toBe(500);
    expect(res.body).toContain('Something went wrong');
    expect(res.body).not.toContain('SQLITE_CORRUPT');
  });
});
