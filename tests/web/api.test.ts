import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import {
  alarmDetailSchema,
  alarmSchema,
  decoderSchema,
  eventPageSchema,
  healthSchema,
  loopDetailSchema,
  loopSchema,
  timelineSchema,
} from '../../src/web/api/apiSchemas.js';
import { apiCalls, startTestWeb, type TestWeb } from './fixtures/testWeb.js';

let web: TestWeb;
beforeEach(async () => {
  web = await startTestWeb();
});
afterEach(async () => {
  await web.close();
});

const { get, post } = apiCalls(() => web);

// ISO 8601 / RFC 3339 §5.6 date-time in UTC with the Z designator.
const ISO_UTC = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d+)?Z$/;

describe('GET /api/v1/loops', () => {
  it('lists every loop with the documented fields, times in ISO 8601 UTC', async () => {
    const res = await get('/api/v1/loops');
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toMatch(/^application\/json/);
    const body = res.json() as unknown[];
    expect(body).toHaveLength(4);
    for (const loop of body) loopSchema.parse(loop);
    const seed = (body as Array<Record<string, unknown>>).find((l) => l.id === 'seed-store')!;
    expect(Object.keys(seed)).toEqual(expect.arrayContaining(['id', 'name', 'decoder', 'input', 'state', 'since', 'lastPulseAt', 'alarm']));
    expect(seed.state).toBe('tripped');
    expect(seed.since).toMatch(ISO_UTC);
    // 12 minutes before the fixture clock (2026-12-01T20:00:00Z).
    expect(seed.since).toBe('2026-12-01T19:48:00.000Z');
    expect(seed.alarm).toEqual({ id: 7, condition: 'tripped', priority: 'alarm', state: 'unacknowledged', active: true });
  });

  it('refuses unknown query keys by name', async () => {
    const res = await get('/api/v1/loops?colour=red');
    expect(res.statusCode).toBe(400);
    expect(res.json()).toEqual({ error: { code: 'PW_WEB_BAD_INPUT', message: expect.stringContaining('colour'), field: 'colour' } });
  });
});

describe('GET /api/v1/loops/:id', () => {
  it('adds the line-quality figures', async () => {
    const res = await get('/api/v1/loops/hen-house');
    expect(res.statusCode).toBe(200);
    const body = loopDetailSchema.parse(res.json());
    expect(body.lineQuality).toMatchObject({ pulses: 7200, outOfTolerance: 2, glitches: 1, lostFrames: 3 });
    expect(body.periodMs).toBe(500);
  });

  it('answers 404 naming the id for an unknown loop', async () => {
    const res = await get('/api/v1/loops/no-such-loop');
    expect(res.statusCode).toBe(404);
    expect(res.json().error).toMatchObject({ code: 'PW_WEB_NOT_FOUND', field: 'id' });
    expect(res.json().error.message).toContain('no-such-loop');
  });

  it('serves a timeline, and checks the hours parameter', async () => {
    const ok = await get('/api/v1/loops/hen-house/timeline?hours=6');
    expect(ok.statusCode).toBe(200);
    const body = timelineSchema.parse(ok.json());
    expect(Date.parse(body.to) - Date.parse(body.from)).toBe(6 * 3_600_000);
    const bad = await get('/api/v1/loops/hen-house/timeline?hours=0');
    expect(bad.statusCode).toBe(400);
    expect(bad.json().error.field).toBe('hours');
    expect((await get('/api/v1/loops/nope/timeline')).statusCode).toBe(404);
  });
});

describe('GET /api/v1/alarms', () => {
  it('lists active alarms by default, all with status=all', async () => {
    const active = await get('/api/v1/alarms');
    expect(active.statusCode).toBe(200);
    const list = active.json() as Array<{ id: number; state: string }>;
    for (const a of list) alarmSchema.parse(a);
    expect(list.map((a) => a.id).sort()).toEqual([7, 8, 9]);
    const all = await get('/api/v1/alarms?status=all');
    expect((all.json() as unknown[]).length).toBe(4);
  });

  it('refuses an unknown status, naming the field', async () => {
    const res = await get('/api/v1/alarms?status=open');
    expect(res.statusCode).toBe(400);
    expect(res.json().error).toEqual({ code: 'PW_WEB_BAD_INPUT', field: 'status', message: 'status: must be "active" or "all"' });
  });

  it('shows one alarm with who was told and its audit trail', async () => {
    const res = await get('/api/v1/alarms/7');
    expect(res.statusCode).toBe(200);
    const body = alarmDetailSchema.parse(res.json());
    expect(body.notified[0]).toMatchObject({ contactName: 'Kitchen tablet' });
    expect(body.audit[0]).toMatchObject({ action: 'raise' });
  });

  it('400 for an id that is not a number, 404 for an unknown one', async () => {
    const bad = await get('/api/v1/alarms/seven');
    expect(bad.statusCode).toBe(400);
    expect(bad.json().error).toMatchObject({ field: 'id', code: 'PW_WEB_BAD_INPUT' });
    const unknown = await get('/api/v1/alarms/4242');
    expect(unknown.statusCode).toBe(404);
    expect(unknown.json().error).toMatchObject({ field: 'id', code: 'PW_WEB_NOT_FOUND' });
  });
});

describe('alarm actions', () => {
  it('acknowledges with a note, as the token holder', async () => {
    const res = await post('/api/v1/alarms/7/ack', { note: 'on my way with a heater' });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ id: 7, state: 'acknowledged', ackedBy: 'token:script-operator', note: 'on my way with a heater' });
    expect(web.site.calls).toContainEqual({ command: 'acknowledge', args: [7, 'token:script-operator', 'on my way with a heater'] });
  });

  it('acknowledges with no body at all, and with an empty JSON body', async () => {
    expect((await post('/api/v1/alarms/7/ack')).statusCode).toBe(200);
    web.site.alarms.find((a) => a.id === 9)!.state = 'unacknowledged';
    const empty = await web.app.inject({
      method: 'POST',
      url: '/api/v1/alarms/9/ack',
      headers: { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'application/json' },
      payload: '',
    });
    expect(empty.statusCode).toBe(200);
  });

  it('409 when the alarm cannot be acknowledged in its state', async () => {
    const res = await post('/api/v1/alarms/8/ack', {});
    expect(res.statusCode).toBe(409);
    expect(res.json().error.code).toBe('PW_WEB_BAD_ACTION');
  });

  it('404 for acknowledging an unknown alarm', async () => {
    const res = await post('/api/v1/alarms/999/ack', {});
    expect(res.statusCode).toBe(404);
    expect(res.json().error.field).toBe('id');
  });

  it('bad bodies: 400 naming the field, never a stack', async () => {
    const cases: Array<[unknown, string]> = [
      [{ note: 5 }, 'note'],
      [{ note: 'x'.repeat(1001) }, 'note'],
      [{ notes: 'typo' }, 'notes'],
      [[1, 2], 'body'],
      ['just a string', 'body'],
    ];
    for (const [body, field] of cases) {
      const res = await post('/api/v1/alarms/7/ack', body);
      expect(res.statusCode, JSON.stringify(body)).toBe(400);
      expect(res.json().error.field, JSON.stringify(body)).toBe(field);
      expect(res.body).not.toMatch(/at .*\.(ts|js):\d+/);
    }
  });

  it('malformed JSON is a 400 about the body', async () => {
    const res = await web.app.inject({
      method: 'POST',
      url: '/api/v1/alarms/7/ack',
      headers: { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'application/json' },
      payload: '{"note": "unterminated',
    });
    expect(res.statusCode).toBe(400);
    expect(res.json().error).toMatchObject({ code: 'PW_WEB_BAD_JSON', field: 'body' });
    expect(res.body).not.toMatch(/\.ts:\d+|\.js:\d+/);
  });

  it('a body that is not JSON is 415', async () => {
    const res = await web.app.inject({
      method: 'POST',
      url: '/api/v1/alarms/7/ack',
      headers: { authorization: `Bearer ${web.tokens.operator}`, 'content-type': 'text/plain' },
      payload: 'ack please',
    });
    expect(res.statusCode).toBe(415);
    expect(res.json().error.field).toBe('content-type');
  });

  it('shelves for a number of minutes with a reason, then unshelves', async () => {
    const res = await post('/api/v1/alarms/7/shelve', { minutes: 90, reason: 'heater fitted, watching it' });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ state: 'shelved', shelveReason: 'heater fitted, watching it' });
    // 90 min after 2026-12-01T20:00:00Z
    expect(res.json().shelvedUntil).toBe('2026-12-01T21:30:00.000Z');
    const back = await post('/api/v1/alarms/7/unshelve');
    expect(back.statusCode).toBe(200);
    expect(back.json().state).toBe('unacknowledged');
  });

  it('shelve input is checked field by field, and capped by web.max_shelve', async () => {
    const cases: Array<[unknown, string, RegExp]> = [
      [{ reason: 'x' }, 'minutes', /required/],
      [{ minutes: 30 }, 'reason', /required/],
      [{ minutes: 0, reason: 'x' }, 'minutes', /at least 1/],
      [{ minutes: 1.5, reason: 'x' }, 'minutes', /whole/],
      [{ minutes: '30', reason: 'x' }, 'minutes', /number/],
      [{ minutes: 24 * 60 + 1, reason: 'x' }, 'minutes', /at most 1440 \(web\.max_shelve\)/],
      [{ minutes: 30, reason: '   ' }, 'reason', /empty/],
    ];
    for (const [body, field, message] of cases) {
      const res = await post('/api/v1/alarms/7/shelve', body);
      expect(res.statusCode, JSON.stringify(body)).toBe(400);
      expect(res.json().error.field, JSON.stringify(body)).toBe(field);
      expect(res.json().error.message, JSON.stringify(body)).toMatch(message);
    }
  });
});

describe('loops out of service and back', () => {
  it('takes a loop out with a note and puts it back', async () => {
    const out = await post('/api/v1/loops/glasshouse/out-of-service', { note: 'reglazing this week' });
    expect(out.statusCode).toBe(200);
    expect(out.json()).toMatchObject({ id: 'glasshouse', inService: false, serviceNote: 'reglazing this week' });
    const back = await post('/api/v1/loops/glasshouse/return-to-service', {});
    expect(back.statusCode).toBe(200);
    expect(back.json().inService).toBe(true);
  });

  it('needs the note, and knows its loops', async () => {
    const noNote = await post('/api/v1/loops/glasshouse/out-of-service', {});
    expect(noNote.statusCode).toBe(400);
    expect(noNote.json().error.field).toBe('note');
    const unknown = await post('/api/v1/loops/nowhere/out-of-service', { note: 'x' });
    expect(unknown.statusCode).toBe(404);
    const twice = await post('/api/v1/loops/glasshouse/return-to-service');
    expect(twice.statusCode).toBe(409);
  });
});

describe('GET /api/v1/events', () => {
  it('pages through with the cursor, newest first, without gaps or repeats', async () => {
    const seen: string[] = [];
    let url = '/api/v1/events?limit=100';
    for (;;) {
      const res = await get(url);
      expect(res.statusCode).toBe(200);
      const page = eventPageSchema.parse(res.json());
      seen.push(...page.items.map((e) => e.id));
      if (!page.nextCursor) break;
      url = `/api/v1/events?limit=100&cursor=${encodeURIComponent(page.nextCursor)}`;
    }
    expect(seen).toHaveLength(250);
    expect(new Set(seen).size).toBe(250);
  });

  it('filters by loop and time', async () => {
    const res = await get('/api/v1/events?loop=hen-house&since=2026-12-01T18:00:00Z&until=2026-12-01T20:00:01Z');
    const page = eventPageSchema.parse(res.json());
    expect(page.items.length).toBeGreaterThan(0);
    for (const e of page.items) {
      expect(e.loopId).toBe('hen-house');
      expect(Date.parse(e.at)).toBeGreaterThanOrEqual(Date.parse('2026-12-01T18:00:00Z'));
    }
  });

  it('bad filters name their field; an unknown loop is 404; a forged cursor 400', async () => {
    for (const [query, field] of [
      ['since=yesterday', 'since'],
      ['until=2026-13-45T99:00:00Z', 'until'],
      ['limit=0', 'limit'],
      ['limit=5000', 'limit'],
      ['priority=urgent', 'priority'],
      ['loop=a&loop=b', 'loop'],
    ] as const) {
      const res = await get(`/api/v1/events?${query}`);
      expect(res.statusCode, query).toBe(400);
      expect(res.json().error.field, query).toBe(field);
    }
    const unknown = await get('/api/v1/events?loop=nowhere');
    expect(unknown.statusCode).toBe(404);
    expect(unknown.json().error.field).toBe('loop');
    const cursor = await get('/api/v1/events?cursor=forged');
    expect(cursor.statusCode).toBe(400);
    expect(cursor.json().error.field).toBe('cursor');
  });
});

describe('GET /api/v1/decoders and /api/v1/me', () => {
  it('lists decoders', async () => {
    const res = await get('/api/v1/decoders');
    expect(res.statusCode).toBe(200);
    const [decoder] = res.json() as unknown[];
    expect(decoderSchema.parse(decoder)).toMatchObject({ id: 'house', status: 'connected', lostFrames: 2 });
  });

  it('says who the token belongs to', async () => {
    const res = await get('/api/v1/me', web.tokens.admin);
    expect(res.json()).toEqual({ name: 'token:script-admin', role: 'admin', via: 'token' });
  });
});

describe('GET /healthz', () => {
  it('200 without auth when everything works', async () => {
    const res = await web.app.inject({ method: 'GET', url: '/healthz' });
    expect(res.statusCode).toBe(200);
    expect(healthSchema.parse(res.json())).toMatchObject({ ok: true, reasons: [] });
  });

  it('503 with the reasons when something does not', async () => {
    web.site.health.ok = false;
    web.site.health.checks[2] = { name: 'mail', ok: false, reason: 'SMTP refused the last 4 attempts' };
    const res = await web.app.inject({ method: 'GET', url: '/healthz' });
    expect(res.statusCode).toBe(503);
    expect(res.json().reasons).toEqual(['mail: SMTP refused the last 4 attempts']);
  });

  it('503, not 500, when the read model itself fails', async () => {
    web.site.read.health = () => {
      throw new Error('database disk image is malformed');
    };
    const res = await web.app.inject({ method: 'GET', url: '/healthz' });
    expect(res.statusCode).toBe(503);
    expect(res.json().reasons[0]).toMatch(/^store:/);
    expect(res.body).not.toContain('malformed');
  });
});

describe('unknown routes and internal failures', () => {
  it('unknown API route: JSON 404', async () => {
    const res = await get('/api/v1/nothing-here');
    expect(res.statusCode).toBe(404);
    expect(res.json().error.code).toBe('PW_WEB_NO_ROUTE');
  });

  it('an exception inside a handler is a 500 with a reference and no stack trace', async () => {
    web.site.read.decoders = () => {
      throw new Error('secret internals at /opt/pairwatch/src/x.ts:12');
    };
    const res = await get('/api/v1/decoders');
    expect(res.statusCode).toBe(500);
    expect(res.json().error.code).toBe('PW_WEB_INTERNAL');
    expect(res.body).not.toContain('secret internals');
    expect(res.body).not.toMatch(/\.ts:\d+/);
  });
});

describe('oversized bodies', () => {
  it('413 naming the body', async () => {
    const res = await post('/api/v1/alarms/7/ack', { note: 'x'.repeat(70_000) });
    expect(res.statusCode).toBe(413);
    expect(res.json().error).toMatchObject({ code: 'PW_WEB_BODY_TOO_LARGE', field: 'body' });
  });
});
