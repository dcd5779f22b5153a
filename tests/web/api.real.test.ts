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
import { BOARD_END_US, startBoardSite, type RealTestWeb } from './fixtures/realSite.js';
import { apiCalls, START_MS, startTestWeb } from './fixtures/testWeb.js';

/*
 * The API over the real monitor core (realSite.ts): the states, alarms and refusals here are the alarm
 * engine's, reached by decoder lines on a fake clock, not the stand-in's imitation of them. The times
 * are worked out from the script and the protocol defaults (trip 1500 ms after the last pulse start,
 * open 200 ms after the fall to O, healthy at the end of the 3rd pulse in rhythm). The last block
 * checks the stand-in (fakeSite.ts) against the engine: same fields for every view the web reads.
 */

let web: RealTestWeb;
beforeEach(async () => {
  web = await startBoardSite();
});
afterEach(async () => {
  await web.close();
});

const { get, post } = apiCalls(() => web);
const iso = (msAfterStart: number) => new Date(START_MS + msAfterStart).toISOString();

type Loop = { id: string; state: string; since: string; lastPulseAt: string | null; alarm: { id: number; condition: string; priority: string; state: string } | null };
const loops = async () => (await get('/api/v1/loops')).json() as Loop[];
const alarmOf = async (loopId: string) => (await loops()).find((l) => l.id === loopId)!.alarm!;

describe('the API over the real engine', () => {
  it('lists every loop in the state the engine reached, dated when its window ran out', async () => {
    const res = await get('/api/v1/loops');
    expect(res.statusCode).toBe(200);
    const body = res.json() as Loop[];
    for (const loop of body) loopSchema.parse(loop);
    const byId = Object.fromEntries(body.map((l) => [l.id, l]));
    // Third pulse 1100–1101 ms; last pulse before the end of the script at 5600 ms.
    expect(byId['hen-house']).toMatchObject({ state: 'healthy', since: iso(1101), lastPulseAt: iso(5600), alarm: null });
    expect(byId['glasshouse']).toMatchObject({ state: 'healthy', since: iso(1101), alarm: null });
    // Last pulse at 1100 ms + 1500 ms.
    expect(byId['seed-store']).toMatchObject({ state: 'tripped', since: iso(2600), lastPulseAt: iso(1100) });
    expect(byId['seed-store']!.alarm).toMatchObject({ condition: 'tripped', priority: 'alarm', state: 'unacknowledged' });
    // O from 3000 ms, held 200 ms.
    expect(byId['pump-shed']).toMatchObject({ state: 'open', since: iso(3200) });
    expect(byId['pump-shed']!.alarm).toMatchObject({ condition: 'open', priority: 'trouble', state: 'unacknowledged' });
  });

  it('shows a loop with its line quality, and its timeline', async () => {
    web.site.core.minute(START_MS + BOARD_END_US / 1000, START_MS);
    const res = await get('/api/v1/loops/hen-house');
    expect(res.statusCode).toBe(200);
    const body = loopDetailSchema.parse(res.json());
    // Pulses at 100, 600, …, 5600 ms: 12 pulses, 11 intervals of exactly 500 ms.
    expect(body.lineQuality).toMatchObject({ pulses: 12, outOfTolerance: 0, glitches: 0, longPulses: 0, lostFrames: 0 });
    expect(body.lineQuality.intervalMeanMs).toBeCloseTo(500, 9);
    expect(body.periodMs).toBe(500);
    const timeline = await get('/api/v1/loops/seed-store/timeline?hours=1');
    expect(timeline.statusCode).toBe(200);
    timelineSchema.parse(timeline.json());
  });

  it('lists the alarms and shows one with its audit trail', async () => {
    const res = await get('/api/v1/alarms');
    expect(res.statusCode).toBe(200);
    const list = res.json() as Array<{ loopId: string | null; condition: string }>;
    for (const alarm of list) alarmSchema.parse(alarm);
    expect(list.map((a) => [a.loopId, a.condition]).sort()).toEqual([['pump-shed', 'open'], ['seed-store', 'tripped']]);
    const { id } = await alarmOf('seed-store');
    const detail = alarmDetailSchema.parse((await get(`/api/v1/alarms/${id}`)).json());
    expect(detail).toMatchObject({ loopId: 'seed-store', condition: 'tripped', active: true });
    expect(detail.audit[0]).toMatchObject({ action: 'raise' });
  });

  it('acknowledges once; a second acknowledgement is refused by the engine (409)', async () => {
    const { id } = await alarmOf('seed-store');
    const res = await post(`/api/v1/alarms/${id}/ack`, { note: 'on my way with a heater' });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ id, state: 'acknowledged', ackedBy: 'token:script-operator', note: 'on my way with a heater' });
    expect((await alarmOf('seed-store')).state).toBe('acknowledged');
    expect((await post(`/api/v1/alarms/${id}/ack`, {})).statusCode).toBe(409);
    expect((await post('/api/v1/alarms/999/ack', {})).statusCode).toBe(404);
  });

  it('shelves for a number of minutes and unshelves back to unacknowledged (ISA-18.2: shelving suppresses, it does not acknowledge)', async () => {
    const { id } = await alarmOf('seed-store');
    const res = await post(`/api/v1/alarms/${id}/shelve`, { minutes: 90, reason: 'heater fitted, watching it' });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ state: 'shelved', shelveReason: 'heater fitted, watching it' });
    expect(res.json().shelvedUntil).toBe(new Date(web.clock.now + 90 * 60_000).toISOString());
    const back = await post(`/api/v1/alarms/${id}/unshelve`);
    expect(back.statusCode).toBe(200);
    expect(back.json().state).toBe('unacknowledged');
  });

  it('takes a loop out of service and back; putting back a loop in service is refused (409)', async () => {
    const out = await post('/api/v1/loops/glasshouse/out-of-service', { note: 'reglazing this week' });
    expect(out.statusCode).toBe(200);
    expect(out.json()).toMatchObject({ id: 'glasshouse', inService: false, serviceNote: 'reglazing this week' });
    const back = await post('/api/v1/loops/glasshouse/return-to-service', {});
    expect(back.statusCode).toBe(200);
    expect(back.json().inService).toBe(true);
    expect((await post('/api/v1/loops/glasshouse/return-to-service')).statusCode).toBe(409);
    expect((await post('/api/v1/loops/nowhere/out-of-service', { note: 'x' })).statusCode).toBe(404);
  });

  it('lists the stored state changes as events, and the decoder as the engine counted it', async () => {
    const events = eventPageSchema.parse((await get('/api/v1/events?loop=seed-store')).json());
    expect(events.items.some((e) => e.fromState === 'healthy' && e.toState === 'tripped')).toBe(true);
    const [decoder] = (await get('/api/v1/decoders')).json() as unknown[];
    expect(decoderSchema.parse(decoder)).toMatchObject({ id: 'house', status: 'connected', firmware: 'test-1', inputs: 8, lostFrames: 0 });
    const health = await web.app.inject({ method: 'GET', url: '/healthz' });
    expect(health.statusCode).toBe(200);
    healthSchema.parse(health.json());
  });
});

describe('the stand-in (fakeSite.ts) against the engine', () => {
  const fields = (value: unknown) => Object.keys(value as object).sort();

  it('gives every view the web reads with the same fields', async () => {
    const { id } = await alarmOf('seed-store');
    const [read, stand] = [
      { loops: (await get('/api/v1/loops')).json(), loop: (await get('/api/v1/loops/seed-store')).json(), alarm: (await get(`/api/v1/alarms/${id}`)).json(), alarms: (await get('/api/v1/alarms')).json(), decoders: (await get('/api/v1/decoders')).json() },
      await standInResponses(),
    ];
    expect(fields(read.loops[0])).toEqual(fields(stand.loops[0]));
    expect(fields(read.loop)).toEqual(fields(stand.loop));
    expect(fields(read.loop.lineQuality)).toEqual(fields(stand.loop.lineQuality));
    expect(fields(read.alarm)).toEqual(fields(stand.alarm));
    expect(fields(read.alarms[0])).toEqual(fields(stand.alarms[0]));
    expect(fields(read.decoders[0])).toEqual(fields(stand.decoders[0]));
  });
});

/** The same requests against the stand-in, through the same web server. */
async function standInResponses() {
  const standIn = await startTestWeb();
  try {
    const g = (url: string) => standIn.app.inject({ method: 'GET', url, headers: { authorization: `Bearer ${standIn.tokens.viewer}` } }).then((r) => r.json());
    return { loops: await g('/api/v1/loops'), loop: await g('/api/v1/loops/seed-store'), alarm: await g('/api/v1/alarms/7'), alarms: await g('/api/v1/alarms'), decoders: await g('/api/v1/decoders') };
  } finally {
    await standIn.close();
  }
}
