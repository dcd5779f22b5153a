import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { AlarmDetailView } from '../../../src/web/webPorts.js';
import { session, startTestWeb, testConfig, type Session, type TestWeb } from '../fixtures/testWeb.js';

/**
 * Issue 9, item 17 (pages name the decoder by its configured name; advice follows the decoder link) and
 * item 18 (a latched alarm back to normal but unacknowledged reads so on every page, and a closed
 * alarm's page has no alarm banner), checked on the pages the real web server renders.
 */
const BACK = 'back to normal — still needs acknowledging';
const DECODER_NAME = 'Decoder in the farmhouse scullery';

let web: TestWeb;
let otto: Session;
beforeEach(async () => {
  web = await startTestWeb({
    config: testConfig({ decoders: [{ id: 'house', name: DECODER_NAME, port: 'tcp://192.168.7.20:4001', inputs: 8 }] }),
  });
  otto = await session(web.app, 'otto');
});
afterEach(async () => {
  await web.close();
});

const page = async (url: string) => (await web.app.inject({ method: 'GET', url, headers: { cookie: otto.cookie } })).body;

function decoderOffline(): AlarmDetailView {
  const t0 = web.clock.now;
  return {
    id: 21, loopId: null, source: 'house', condition: 'offline', priority: 'trouble', state: 'unacknowledged', active: true,
    raisedAtMs: t0 - 60_000, clearedAtMs: null, ackedAtMs: null, ackedBy: null, note: null, shelvedUntilMs: null, shelveReason: null,
    loopName: null, location: null, notified: [], audit: [],
  };
}

/** The seed-store trip, latched, its condition gone, nobody has acknowledged it. */
function latchBackToNormal(): void {
  const seed = web.site.loops.find((l) => l.id === 'seed-store')!;
  seed.state = 'healthy';
  seed.alarm = { ...seed.alarm!, state: 'unacknowledged', active: false };
  const alarm = web.site.alarms.find((a) => a.id === 7)!;
  alarm.active = false;
  alarm.clearedAtMs = web.clock.now - 60_000;
}

describe('decoder names on pages (issue 9, item 17)', () => {
  it('the loop page wires to the decoder by name, never "decoder house"', async () => {
    const body = await page('/loops/hen-house');
    expect(body).toContain(`<dt>Wiring</dt><dd>${DECODER_NAME}, input 1</dd>`);
    expect(body).not.toMatch(/decoder house/i);
  });

  it('a decoder alarm on the board and on its page is named by the decoder name', async () => {
    web.site.alarms.push(decoderOffline());
    const board = await page('/');
    expect(board).toContain(`<span class="card-name">${DECODER_NAME}</span>`);
    expect(board).not.toContain('<span class="card-name">house</span>');
    const alarm = await page('/alarms/21');
    expect(alarm).toContain(`${DECODER_NAME}: decoder offline`);
    expect(alarm).not.toMatch(/decoder house/i);
  });

  it('what to check on a tcp:// decoder going offline is the network, not a USB cable', async () => {
    web.site.alarms.push(decoderOffline());
    const alarm = await page('/alarms/21');
    const check = /<h2>What to check<\/h2><p>([^<]*)<\/p>/.exec(alarm)?.[1] ?? '';
    expect(check).toMatch(/network/);
    expect(check).not.toMatch(/USB/);
  });
});

describe('back to normal, still needs acknowledging (issue 9, item 18)', () => {
  it('the board card says so and keeps an attention look, not the healthy tick', async () => {
    latchBackToNormal();
    const board = await page('/');
    const card = /<li class="card ([^"]*)" data-loop="seed-store">([\s\S]*?)<\/li>/.exec(board)!;
    expect(card[1]).toContain('state-back-to-normal');
    expect(card[1]).not.toContain('state-healthy');
    expect(card[2]).toContain('Back to normal — still needs acknowledging');
    expect(card[2]).not.toContain('shape-healthy');
    // It still counts as an alarm, not among the healthy loops.
    expect(board).toContain('Alarm (1)');
    expect(board).toContain('Healthy (2)');
  });

  it('the loop page and the alarm page say the same words', async () => {
    latchBackToNormal();
    const loop = await page('/loops/seed-store');
    expect(loop).toContain(BACK);
    expect(loop).toMatch(/<div class="status state-back-to-normal attention-alarm">/);
    const alarm = await page('/alarms/7');
    expect(alarm).toMatch(/<p class="status-state">Back to normal — still needs acknowledging<\/p>/);
    expect(alarm).toMatch(/class="status status-alarm state-back-to-normal attention-alarm"/);
    expect(alarm).toContain('action="/alarms/7/ack"');
  });

  it('a closed alarm\'s page has no alarm banner and nothing to do', async () => {
    const alarm = await page('/alarms/3');
    const banner = /<div class="(status [^"]*)">/.exec(alarm)![1]!;
    expect(banner).toContain('state-closed');
    expect(banner).not.toMatch(/state-(tripped|open|shorted|offline|back-to-normal)/);
    expect(alarm).toContain('<p class="status-state">Closed</p>');
    expect(alarm).not.toContain('action="/alarms/3/ack"');
  });
});
