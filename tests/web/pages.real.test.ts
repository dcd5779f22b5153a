import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { CONDITION_TEXT } from '../../src/model/condition.js';
import { escapeHtml } from '../../src/web/pages/html.js';
import { startBoardSite, type RealTestWeb } from './fixtures/realSite.js';
import { pageCalls, session, type Session } from './fixtures/testWeb.js';

/*
 * The pages over the real monitor core (realSite.ts): the board and the alarm page show what the
 * engine made of the decoder lines, and a form acknowledgement goes through the engine. The board
 * order (alarms, then trouble, then healthy) is the README's; the states are reached by the script.
 */

let web: RealTestWeb;
let otto: Session;
beforeEach(async () => {
  web = await startBoardSite();
  otto = await session(web.app, 'otto');
});
afterEach(async () => {
  await web.close();
});

const { page, postForm } = pageCalls(() => web, () => otto);
const seedStoreAlarmId = () => web.site.core.openAlarms().find((a) => a.loopId === 'seed-store' && a.condition === 'tripped')!.id;

describe('the board over the real engine', () => {
  it('lists the tripped loop first, then the open one, then the healthy ones, with state words and shapes', async () => {
    const res = await page('/');
    expect(res.statusCode).toBe(200);
    const body = res.body;
    const at = (name: string) => body.indexOf(`<span class="card-name">${name}</span>`);
    expect(at('Seed store')).toBeGreaterThan(0);
    expect(at('Seed store')).toBeLessThan(at('Pump shed'));
    expect(at('Pump shed')).toBeLessThan(Math.min(at('Glasshouse'), at('Hen house')));
    expect(body.indexOf('Alarm (1)')).toBeLessThan(body.indexOf('Trouble (1)'));
    expect(body.indexOf('Trouble (1)')).toBeLessThan(body.indexOf('Healthy (2)'));
    expect(body).toContain('<span class="card-state">Tripped</span>');
    expect(body).toContain('<span class="card-state">Open circuit</span>');
    expect(body).toMatch(/class="shape shape-tripped"/);
    expect(body).toMatch(/class="shape shape-open"/);
    expect(body).toMatch(/class="shape shape-healthy"/);
    expect(body).toContain(`href="/alarms/${seedStoreAlarmId()}"`);
    expect(body).toContain('not a life-safety system');
  });
});

describe('the alarm page over the real engine', () => {
  it('says what and what to check, and offers the forms to an operator', async () => {
    const id = seedStoreAlarmId();
    const body = (await page(`/alarms/${id}`)).body;
    expect(body).toContain(escapeHtml(CONDITION_TEXT.tripped.words));
    expect(body).toContain(escapeHtml(CONDITION_TEXT.tripped.check));
    // The trip window ran out at 2.6 s (last pulse 1.1 s + 1500 ms); the alarm is raised when that is
    // known, at the first frame past it: the TICK at 2.8 s (TICKs every 200 ms from 0).
    expect(body).toContain('<time datetime="2026-12-01T20:00:02.800Z">');
    expect(body).toContain(`action="/alarms/${id}/ack"`);
    expect(body).toContain(`action="/alarms/${id}/shelve"`);
  });

  it('acknowledge with a note through the form: the engine records it and the page says so', async () => {
    const id = seedStoreAlarmId();
    const res = await postForm(`/alarms/${id}/ack`, { note: 'heater on' });
    expect(res.statusCode).toBe(303);
    const after = await page(res.headers.location as string);
    expect(after.body).toContain('Acknowledged.');
    expect(after.body).toContain('by otto: “heater on”');
    expect(after.body).not.toContain(`action="/alarms/${id}/ack"`);
    expect(web.site.core.openAlarms().find((a) => a.id === id)).toMatchObject({ state: 'acknowledged', ackedBy: 'otto', note: 'heater on' });
    // Committed before anything acts on it: the row is in the SQLite file.
    expect(web.db.prepare('SELECT state FROM alarms WHERE id = ?').get(id)).toEqual({ state: 'acknowledged' });
  });

  it('a refused acknowledgement (already acknowledged) comes back as a plain page, not a crash', async () => {
    const id = seedStoreAlarmId();
    expect((await postForm(`/alarms/${id}/ack`, { note: 'first' })).statusCode).toBe(303);
    const again = await postForm(`/alarms/${id}/ack`, { note: 'second' });
    expect(again.statusCode).toBeGreaterThanOrEqual(300);
    expect(again.headers['content-type'] ?? 'text/html').toMatch(/^text\/html/);
    expect(web.site.core.openAlarms().find((a) => a.id === id)!.note).toBe('first');
  });
});
