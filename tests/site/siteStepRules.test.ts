import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS } from '../../src/classify/index.js';
import { parseConfig } from '../../src/config/loadConfig.js';
import { encodeLine } from '../../src/protocol/encodeLine.js';
import { alarmInputsFor, loopsById } from '../../src/site/alarmInputsFor.js';
import { indexSite, initialSiteState, stepSite, type SiteDefinition, type SiteIndex } from '../../src/site/siteStep.js';
import type { SiteEffect, SiteInput, SiteState } from '../../src/site/siteTypes.js';
import type { LoopState } from '../../src/model/loopState.js';
import { wireScript } from '../helpers/wireScript.js';

/**
 * The site step's rules as the README states them: "Every loop tripping at once" (held 1 s, one round
 * per 5 minutes), "Decoder time against host time" (2 s ahead of the smallest host-minus-decoder time,
 * which may rise by 1 % of the host time elapsed; late lines never trip it), the stream faults table
 * (HELLO, FAULT RESTART, configured `inputs` before a HELLO), and `silence` (offline, counted from
 * start-up). Every expected time is worked out by hand from the default loop settings (period 500 ms,
 * trip 1.5 s, open 200 ms, 3 pulses to healthy) and the wire scripts below; host time is fake.
 * Each test builds its own site index, so the mutation run attributes the index to the tests that use it.
 */

const HOST = Date.UTC(2026, 11, 1, 6, 0, 0);

function site(loops: Array<[id: string, decoderId: string, input: number]>, decoders: SiteDefinition['decoders'], decoderClockAheadMs?: number): SiteIndex {
  return indexSite({
    loops: loops.map(([id, decoderId, input]) => ({ id, decoderId, input, settings: DEFAULT_LOOP_SETTINGS })),
    decoders,
    ...(decoderClockAheadMs === undefined ? {} : { decoderClockAheadMs }),
  });
}
const twoLoops = () => site([['well-pit', 'main', 1], ['pump-house', 'main', 2]], [{ id: 'main', silenceMs: 2000 }]);

type Timed = { hostMs: number; input: SiteInput };
/** Lines of decoder `main`, each arriving at host time = its decoder time (plus `lateMs`). */
const onTime = (lines: Array<{ atUs: number; line: string }>, lateMs = 0, decoderId = 'main'): Timed[] =>
  lines.map(({ atUs, line }) => ({ hostMs: atUs / 1000 + lateMs, input: { kind: 'line', decoderId, line } }));

function run(index: SiteIndex, inputs: Timed[], state: SiteState = initialSiteState(index.definition, HOST)) {
  const effects: Array<SiteEffect & { stepMs: number }> = [];
  for (const { hostMs, input } of inputs) {
    const step = stepSite(index, state, input, HOST + hostMs);
    state = step.state;
    for (const effect of step.effects) effects.push({ ...effect, stepMs: hostMs });
  }
  return { state, effects };
}

/**
 * The loop state changes the shell is told, as [loop, from, to, atMs − HOST]. Checks on the way that
 * each loop's story is continuous (every change starts from the state last told, beginning at
 * `unknown`) and that no change enters the state the loop is in (README rule 7).
 */
function told(effects: SiteEffect[]): Array<[string, LoopState, LoopState, number]> {
  const last = new Map<string, LoopState>();
  const out: Array<[string, LoopState, LoopState, number]> = [];
  for (const e of effects) {
    if (e.kind !== 'loop' || e.effect.kind !== 'state') continue;
    expect(e.effect.from, `${e.loopId} told a change from a state it was never told`).toBe(last.get(e.loopId) ?? 'unknown');
    expect(e.effect.to, `${e.loopId} told a change into the state it is in`).not.toBe(e.effect.from);
    last.set(e.loopId, e.effect.to);
    out.push([e.loopId, e.effect.from, e.effect.to, e.atMs - HOST]);
  }
  return out;
}
const ofKind = <K extends SiteEffect['kind']>(effects: SiteEffect[], kind: K) => effects.filter((e): e is Extract<SiteEffect, { kind: K }> => e.kind === kind);

/** Both loops pulsing in step from 100 ms until `pulsesUntilUs`, TICKs every 200 ms to `ticksUntilUs`. */
const inStep = (pulsesUntilUs: number, ticksUntilUs: number) =>
  wireScript(2).hello(0).pulses(1, 100_000, pulsesUntilUs).pulses(2, 100_000, pulsesUntilUs).ticks(0, ticksUntilUs).build();

describe('every loop of a decoder tripping at once', () => {
  // Last pulses start at 2600 ms: both trip deadlines are 2600 + 1500 = 4100 ms, first seen on the TICK at 4200 ms.
  it('is held for exactly 1 s, then is one decoder trouble and the loops start over, dated then', () => {
    const { effects } = run(twoLoops(), onTime(inStep(3_000_000, 6_000_000)));
    expect(ofKind(effects, 'decoder-mass-trip').map((e) => [e.atMs - HOST, e.loops])).toEqual([[5200, 2]]);
    expect(told(effects)).toEqual([
      ['well-pit', 'unknown', 'healthy', 1101],
      ['pump-house', 'unknown', 'healthy', 1101],
      ['well-pit', 'healthy', 'unknown', 5200],
      ['pump-house', 'healthy', 'unknown', 5200],
    ]);
  });

  it('a second round within 5 minutes stands as the trips it is', () => {
    // After the start-over at 5200 ms the trip window opens on the next frame (5400 ms): deadline 6900 ms, seen at 7000 ms.
    const { effects } = run(twoLoops(), onTime(inStep(3_000_000, 8_000_000)));
    expect(ofKind(effects, 'decoder-mass-trip')).toHaveLength(1);
    const trips = effects.filter((e) => e.kind === 'loop' && e.effect.kind === 'state' && e.effect.to === 'tripped');
    expect(trips.map((e) => [e.kind === 'loop' && e.loopId, e.atMs - HOST, e.stepMs])).toEqual([
      ['well-pit', 6900, 7000],
      ['pump-house', 6900, 7000],
    ]);
  });

  it('a round exactly 5 minutes after the last decoder trouble is no longer within them: it is held and becomes one again', () => {
    // First round as above: one decoder trouble at 5200 ms, believed until 305 200 ms. Both loops pulse again from
    // 300 100 ms to 303 600 ms: deadlines 305 100 ms, first seen on the TICK at exactly 305 200 ms; held 1 s.
    const lines = wireScript(2).hello(0)
      .pulses(1, 100_000, 3_000_000).pulses(2, 100_000, 3_000_000)
      .pulses(1, 300_100_000, 303_600_001).pulses(2, 300_100_000, 303_600_001)
      .ticks(0, 307_000_000).build();
    const { effects } = run(twoLoops(), onTime(lines));
    expect(ofKind(effects, 'decoder-mass-trip').map((e) => e.atMs - HOST)).toEqual([5200, 306_200]);
  });

  it('two of three loops tripping together stand as trips once the window is over, dated when they tripped', () => {
    const index = site([['well-pit', 'main', 1], ['pump-house', 'main', 2], ['barn', 'main', 3]], [{ id: 'main', silenceMs: 2000 }]);
    const lines = wireScript(3).hello(0).pulses(1, 100_000, 3_000_000).pulses(2, 100_000, 3_000_000).pulses(3, 100_000, 8_000_000).ticks(0, 6_000_000).build();
    const { effects } = run(index, onTime(lines));
    expect(ofKind(effects, 'decoder-mass-trip')).toEqual([]);
    const trips = effects.filter((e) => e.kind === 'loop' && e.effect.kind === 'state' && e.effect.to === 'tripped');
    expect(trips.map((e) => [e.kind === 'loop' && e.loopId, e.atMs - HOST, e.stepMs])).toEqual([
      ['well-pit', 4100, 5200],
      ['pump-house', 4100, 5200],
    ]);
  });

  it('two of three held, and one of them cut inside the window: at its end the trips and then the open are told, in order', () => {
    // As above, trips seen on the TICK at 4200 ms and held to 5200 ms; well pit's line is cut at 4300 ms: open at 4500 ms.
    const index = site([['well-pit', 'main', 1], ['pump-house', 'main', 2], ['barn', 'main', 3]], [{ id: 'main', silenceMs: 2000 }]);
    const lines = wireScript(3).hello(0).pulses(1, 100_000, 3_000_000).pulses(2, 100_000, 3_000_000).pulses(3, 100_000, 8_000_000)
      .edge(4_300_000, 1, 'O').ticks(0, 6_000_000).build();
    const { effects } = run(index, onTime(lines));
    expect(told(effects).filter(([, , to]) => to !== 'healthy')).toEqual([
      ['well-pit', 'healthy', 'tripped', 4100],
      ['pump-house', 'healthy', 'tripped', 4100],
      ['well-pit', 'tripped', 'open', 4500],
    ]);
  });

  it('held trips stand as they were when the decoder goes offline within the window', () => {
    const { state, effects } = run(twoLoops(), onTime(inStep(3_000_000, 4_200_000)));
    expect(told(effects).map(([, , to]) => to)).toEqual(['healthy', 'healthy']);
    const down = run(twoLoops(), [{ hostMs: 4500, input: { kind: 'link-down', decoderId: 'main', reason: 'device removed' } }], state).effects;
    expect(down.map((e) => e.kind)).toEqual(['loop', 'loop', 'decoder-offline', 'loop', 'loop']);
    expect(told([...effects, ...down]).slice(2)).toEqual([
      ['well-pit', 'healthy', 'tripped', 4100],
      ['pump-house', 'healthy', 'tripped', 4100],
      ['well-pit', 'tripped', 'offline', 4500],
      ['pump-house', 'tripped', 'offline', 4500],
    ]);
  });

  it('what a held loop does next waits with its trip, so nothing is told out of order', () => {
    // Well pit's line is cut 100 ms after the held trip: open at 4500 ms, inside the window.
    const lines = wireScript(2).hello(0).pulses(1, 100_000, 3_000_000).pulses(2, 100_000, 3_000_000).edge(4_300_000, 1, 'O').ticks(0, 6_000_000).build();
    const { effects } = run(twoLoops(), onTime(lines));
    const massAt = effects.findIndex((e) => e.kind === 'decoder-mass-trip');
    expect(massAt).toBeGreaterThan(0);
    expect(told(effects.slice(0, massAt)).map(([loop, , to]) => [loop, to])).toEqual([['well-pit', 'healthy'], ['pump-house', 'healthy']]);
    told(effects); // continuous all the way
  });

  it('two decoders tripping at once each become their own decoder trouble', () => {
    const index = site([['well-pit', 'main', 1], ['pump-house', 'main', 2], ['barn', 'yard', 1], ['byre', 'yard', 2]], [{ id: 'main', silenceMs: 2000 }, { id: 'yard', silenceMs: 2000 }]);
    // The yard decoder's lines arrive 50 ms after main's: its trips are held one step later, while main's hold is open.
    const inputs = [...onTime(inStep(3_000_000, 6_000_000)), ...onTime(inStep(3_000_000, 6_000_000), 50, 'yard')].sort((a, b) => a.hostMs - b.hostMs);
    const { effects } = run(index, inputs);
    expect(ofKind(effects, 'decoder-mass-trip').map((e) => [e.decoderId, e.atMs - HOST])).toEqual([['main', 5200], ['yard', 5250]]);
    expect(told(effects).filter(([, , to]) => to === 'tripped')).toEqual([]);
  });

  it('loops that trip together before ever being healthy start over without telling anything', () => {
    // No pulses at all: both trip windows run out 1500 ms after the first frame, seen on the TICK at 1600 ms.
    const { effects } = run(twoLoops(), onTime(wireScript(2).hello(0).ticks(0, 3_000_000).build()));
    expect(ofKind(effects, 'decoder-mass-trip').map((e) => e.atMs - HOST)).toEqual([2600]);
    expect(told(effects)).toEqual([]);
  });
});

describe('decoder silence and the link', () => {
  it('a decoder that never speaks goes offline once its silence has passed since start-up', () => {
    const index = twoLoops();
    expect(run(index, [{ hostMs: 1999, input: { kind: 'clock' } }]).effects).toEqual([]);
    const { effects } = run(index, [{ hostMs: 2000, input: { kind: 'clock' } }]);
    expect(ofKind(effects, 'decoder-offline').map((e) => e.reason)).toEqual(['no valid line for 2 s']);
    expect(told(effects)).toEqual([['well-pit', 'unknown', 'offline', 2000], ['pump-house', 'unknown', 'offline', 2000]]);
  });

  it('uses the silence time configured for that decoder', () => {
    const index = site([['barn', 'yard', 1]], [{ id: 'yard', silenceMs: 5000 }]);
    expect(run(index, [{ hostMs: 4999, input: { kind: 'clock' } }]).effects).toEqual([]);
    expect(ofKind(run(index, [{ hostMs: 5000, input: { kind: 'clock' } }]).effects, 'decoder-offline').map((e) => e.reason)).toEqual(['no valid line for 5 s']);
  });

  it('a decoder with no loops configured goes offline on its own', () => {
    const index = site([['well-pit', 'main', 1]], [{ id: 'main', silenceMs: 2000 }, { id: 'spare', silenceMs: 1000 }]);
    const { effects } = run(index, [{ hostMs: 1000, input: { kind: 'clock' } }]);
    expect(effects.map((e) => [e.kind, 'decoderId' in e ? e.decoderId : null])).toEqual([['decoder-offline', 'spare']]);
  });

  it('offline, back on the next TICK of a decoder that kept running, and offline again when it falls silent again', () => {
    const index = twoLoops();
    const lines = inStep(2_000_000, 2_000_000);
    let { state, effects } = run(index, onTime(lines));
    const off = run(index, [{ hostMs: 4000, input: { kind: 'clock' } }], state);
    // Lines 4.0–4.8 s were lost on the way; the decoder's seq and clock carry on.
    const seq = lines.length - 1 + 15;
    const back = run(index, [
      { hostMs: 5000, input: { kind: 'line', decoderId: 'main', line: encodeLine(`TICK ${seq} 5000000 NN`).replace(/\n$/, '') } },
      { hostMs: 5200, input: { kind: 'line', decoderId: 'main', line: encodeLine(`TICK ${seq + 1} 5200000 NN`).replace(/\n$/, '') } },
    ], off.state);
    const again = run(index, [{ hostMs: 7199, input: { kind: 'clock' } }, { hostMs: 7200, input: { kind: 'clock' } }], back.state);
    effects = [...effects, ...off.effects, ...back.effects, ...again.effects];
    expect(effects.flatMap((e) => (e.kind === 'decoder-offline' || e.kind === 'decoder-online' ? [[e.kind, e.atMs - HOST]] : []))).toEqual([
      ['decoder-offline', 4000],
      ['decoder-online', 5000],
      ['decoder-offline', 7200],
    ]);
    expect(told(effects).slice(2)).toEqual([
      ['well-pit', 'healthy', 'offline', 4000],
      ['pump-house', 'healthy', 'offline', 4000],
      ['well-pit', 'offline', 'unknown', 5000],
      ['pump-house', 'offline', 'unknown', 5000],
      ['well-pit', 'unknown', 'offline', 7200],
      ['pump-house', 'unknown', 'offline', 7200],
    ]);
  });

  it('back online on an EDGE for one loop: every loop of that decoder leaves offline then, not only the one the EDGE was for', () => {
    const index = twoLoops();
    const lines = inStep(2_000_000, 2_000_000);
    const { state } = run(index, onTime(lines));
    const off = run(index, [{ hostMs: 4000, input: { kind: 'clock' } }], state);
    const seq = lines.length - 1 + 15;
    const back = run(index, [{ hostMs: 5000, input: { kind: 'line', decoderId: 'main', line: encodeLine(`EDGE ${seq} 5000000 1 H`).replace(/\n$/, '') } }], off.state);
    expect(ofKind(back.effects, 'decoder-online').map((e) => e.atMs - HOST)).toEqual([5000]);
    expect(back.effects.flatMap((e) => (e.kind === 'loop' && e.effect.kind === 'state' ? [[e.loopId, e.effect.from, e.effect.to, e.atMs - HOST]] : []))).toEqual([
      ['well-pit', 'offline', 'unknown', 5000],
      ['pump-house', 'offline', 'unknown', 5000],
    ]);
  });

  it('HELLO: every loop starts over, told when the HELLO arrived and dated in decoder time at the last time heard (README rule 8)', () => {
    const index = twoLoops();
    const { state } = run(index, onTime(inStep(2_000_000, 2_000_000)));
    const { effects } = run(index, [{ hostMs: 3000, input: { kind: 'line', decoderId: 'main', line: encodeLine('HELLO 1 2 test-1').replace(/\n$/, '') } }], state);
    expect(told([{ kind: 'loop', loopId: 'well-pit', atMs: 0, effect: { kind: 'state', from: 'unknown', to: 'healthy', atUs: 0, reason: '' } },
      { kind: 'loop', loopId: 'pump-house', atMs: 0, effect: { kind: 'state', from: 'unknown', to: 'healthy', atUs: 0, reason: '' } }, ...effects]).slice(2)).toEqual([
      ['well-pit', 'healthy', 'unknown', 3000],
      ['pump-house', 'healthy', 'unknown', 3000],
    ]);
    expect(effects.flatMap((e) => (e.kind === 'loop' && e.effect.kind === 'state' ? [e.effect.atUs] : []))).toEqual([2_000_000, 2_000_000]);
  });

  it('FAULT RESTART (a watchdog restart) is reported, and every loop starts over as after a HELLO', () => {
    const index = twoLoops();
    const lines = inStep(2_000_000, 2_000_000);
    const { state } = run(index, onTime(lines));
    const restart = encodeLine(`FAULT ${lines.length - 1} 2100000 RESTART`).replace(/\n$/, '');
    const { effects } = run(index, [{ hostMs: 2100, input: { kind: 'line', decoderId: 'main', line: restart } }], state);
    expect(ofKind(effects, 'decoder').map((e) => e.event.kind === 'fault' && e.event.code)).toEqual(['RESTART']);
    expect(effects.flatMap((e) => (e.kind === 'loop' && e.effect.kind === 'state' ? [[e.loopId, e.effect.from, e.effect.to, e.atMs - HOST]] : []))).toEqual([
      ['well-pit', 'healthy', 'unknown', 2100],
      ['pump-house', 'healthy', 'unknown', 2100],
    ]);
  });

  it('an input with no loop is reported but moves no loop; a loop on an input the decoder does not have stays not known', () => {
    // The decoder says it has 2 inputs; the attic loop is configured on input 3, input 2 has no loop.
    const index = site([['well-pit', 'main', 1], ['attic', 'main', 3]], [{ id: 'main', silenceMs: 2000 }]);
    const lines = wireScript(2).hello(0).pulses(1, 100_000, 2_000_000).pulses(2, 100_000, 2_000_000).ticks(0, 2_000_000).build();
    const { effects } = run(index, onTime(lines));
    expect(ofKind(effects, 'edge').filter((e) => e.input === 2).map((e) => [e.band, e.atMs - HOST]).slice(0, 2)).toEqual([['H', 100], ['N', 101]]);
    expect(told(effects)).toEqual([['well-pit', 'unknown', 'healthy', 1101]]);
  });

  it('before any HELLO, frames must fit the configured inputs; after a reconnection too', () => {
    const index = indexSite({
      loops: [{ id: 'well-pit', decoderId: 'main', input: 1, settings: DEFAULT_LOOP_SETTINGS }],
      decoders: [{ id: 'main', silenceMs: 2000, inputs: 2 }],
    });
    const tick = (seq: number, atMs: number, bands: string): Timed => ({ hostMs: atMs, input: { kind: 'line', decoderId: 'main', line: encodeLine(`TICK ${seq} ${atMs * 1000} ${bands}`).replace(/\n$/, '') } });
    const dropReasons = (effects: SiteEffect[]) => ofKind(effects, 'decoder').flatMap((e) => (e.event.kind === 'dropped' ? [e.event.reason] : []));
    const first = run(index, [tick(0, 0, 'NNN'), tick(1, 200, 'NN')]);
    expect(dropReasons(first.effects)).toEqual(['range']);
    const replug = run(index, [{ hostMs: 300, input: { kind: 'link-up', decoderId: 'main' } }, tick(0, 400, 'NNN'), tick(1, 600, 'NN')], first.state);
    expect(dropReasons(replug.effects)).toEqual(['range']);
  });
});

describe('decoder time against host time (2 s ahead)', () => {
  const checked = () => site([['well-pit', 'main', 1]], [{ id: 'main', silenceMs: 60_000 }], 2000);
  const frame = (hostMs: number, body: string): Timed => ({ hostMs, input: { kind: 'line', decoderId: 'main', line: encodeLine(body).replace(/\n$/, '') } });
  const clockFaults = (effects: SiteEffect[]) => ofKind(effects, 'decoder-clock').map((e) => [e.atMs - HOST, e.aheadMs]);

  it('copies of a line received again (dropped as duplicates, "no trouble") never make a later on-time frame a clock fault', () => {
    // Decoder time = host time throughout. 30 copies of the 10 s TICK arrive at 20 s: they carry no new time, so the
    // smallest host-minus-decoder time may rise by at most 1 % of the 10 s elapsed, once.
    const copies = Array.from({ length: 30 }, () => frame(20_000, 'TICK 1 10000000 N'));
    const { effects } = run(checked(), [frame(0, 'TICK 0 0 N'), frame(10_000, 'TICK 1 10000000 N'), ...copies, frame(20_000, 'TICK 2 20000000 N')]);
    expect(clockFaults(effects)).toEqual([]);
  });

  it('exactly 2 s ahead is not a fault; more than 2 s is', () => {
    expect(clockFaults(run(checked(), [frame(0, 'TICK 0 0 N'), frame(0, 'TICK 1 2000000 N')]).effects)).toEqual([]);
    expect(clockFaults(run(checked(), [frame(0, 'TICK 0 0 N'), frame(0, 'TICK 1 2001000 N')]).effects)).toEqual([[0, 2001]]);
  });

  it('a 20 s jump: one fault saying how far ahead, the loop starts over, and the frames after it are in step with the host', () => {
    // One loop pulsing every 500 ms from 150 ms (never on a TICK), TICKs every 200 ms, host time = true time. At 5.2 s the
    // decoder's clock jumps 20 s ahead and carries on from there.
    const events: Array<{ at: number; body: (seq: number, raw: number) => string }> = [];
    for (let t = 150; t < 9000; t += 500) events.push({ at: t, body: (s, r) => `EDGE ${s} ${r} 1 H` }, { at: t + 1, body: (s, r) => `EDGE ${s} ${r} 1 N` });
    for (let t = 0; t <= 9000; t += 200) events.push({ at: t + 0.5, body: (s, r) => `TICK ${s} ${r} N` });
    events.sort((a, b) => a.at - b.at);
    const inputs = [frame(0, 'HELLO 1 1 test-1'), ...events.map((e, seq) => {
      const trueMs = Math.floor(e.at);
      const rawMs = trueMs >= 5200 ? trueMs + 20_000 : trueMs;
      return frame(trueMs, e.body(seq, rawMs * 1000));
    })];
    const { effects } = run(checked(), inputs);
    const faults = clockFaults(effects);
    expect(faults).toHaveLength(1);
    // 20 s, plus at most the 1 % the smallest host-minus-decoder time may rise over the 200 ms since the frame before.
    expect(faults[0]![0]).toBe(5200);
    expect(faults[0]![1]).toBeGreaterThanOrEqual(20_000);
    expect(faults[0]![1]).toBeLessThanOrEqual(20_002);
    expect(ofKind(effects, 'decoder-online')).toEqual([]);
    const changes = effects.flatMap((e) => (e.kind === 'loop' && e.effect.kind === 'state' ? [e] : []));
    expect(told(effects).map(([, from, to, atMs]) => [from, to, atMs])).toEqual([
      ['unknown', 'healthy', 1151],
      ['healthy', 'unknown', 5200],
      // Pulses at 5650, 6150 and 6650 ms (true time): healthy at the end of the third.
      ['unknown', 'healthy', 6651],
    ]);
    // Decoder time was put back in step with the host: within the 1 % allowance of host time (2 ms here).
    const healthyAgain = changes[2]!;
    expect(Math.abs(healthyAgain.effect.kind === 'state' ? healthyAgain.effect.atUs / 1000 - 6651 : Infinity)).toBeLessThanOrEqual(2);
  });

  it('a line that arrives 3 s late, then lines on time again, is no fault', () => {
    const { effects } = run(checked(), [
      frame(0, 'TICK 0 0 N'),
      frame(200, 'TICK 1 200000 N'),
      frame(3400, 'TICK 2 400000 N'), // held up in a buffer; the lines between were lost
      frame(3600, 'TICK 18 3600000 N'),
      frame(3800, 'TICK 19 3800000 N'),
    ]);
    expect(clockFaults(effects)).toEqual([]);
  });

  it('a decoder running for an hour: a garbled first line, then its TICKs, is no fault', () => {
    const { effects } = run(checked(), [
      { hostMs: 0, input: { kind: 'line', decoderId: 'main', line: '\u0000K 812 36000' } },
      frame(10, 'TICK 812 3600000000 N'),
      frame(210, 'TICK 813 3600200000 N'),
    ]);
    expect(clockFaults(effects)).toEqual([]);
  });

  it('a decoder clock 0.5 % slow or fast is followed without a fault; 3 s ahead after 20 minutes of running slow is one', () => {
    const drift = (rate: number, extraMs = 0) => {
      const inputs: Timed[] = [];
      for (let s = 0; s <= 1200; s += 1) inputs.push(frame(s * 1000, `TICK ${s} ${Math.round(s * 1000 * rate) * 1000} N`));
      if (extraMs) inputs.push(frame(1_201_000, `TICK 1201 ${(Math.round(1_201_000 * rate) + extraMs) * 1000} N`));
      return clockFaults(run(checked(), inputs).effects);
    };
    expect(drift(0.995)).toEqual([]);
    expect(drift(1.005)).toEqual([]);
    // 20 min at 0.5 % slow: host minus decoder has risen 6 s, and the floor with it (1 % allowed).
    // The jumped frame is 3 s ahead of that: 6 s + 10 ms of allowance − (1 201 000 − 1 194 995 − 3000 = 3005 ms).
    expect(drift(0.995, 3000)).toEqual([[1_201_000, 3005]]);
  });

  it('the host clock stepped back 5 s while the decoder was offline: one clock fault, the decoder is back and its loop starts over', () => {
    const index = checked();
    const lines = wireScript(1).hello(0).pulses(1, 100_000, 2_000_000).ticks(0, 2_000_000).build();
    const quiet = site([['well-pit', 'main', 1]], [{ id: 'main', silenceMs: 1000 }], 2000);
    const before = run(quiet, onTime(lines));
    const off = run(quiet, [{ hostMs: 3500, input: { kind: 'clock' } }], before.state);
    const seq = lines.length - 1 + 20;
    // The decoder's clock says 6 s; the host's, stepped back, says 1 s.
    const { effects, state } = run(index, [frame(1000, `TICK ${seq} 6000000 N`)], off.state);
    expect(effects.map((e) => e.kind)).toEqual(['decoder-clock', 'decoder-online', 'loop']);
    // Back online for good: the next frame tells no second decoder-online.
    expect(state.decoders['main']!.offline).toBe(false);
    expect(clockFaults(effects)).toEqual([[1000, 5000]]);
    expect(told([...before.effects, ...off.effects, ...effects]).slice(1)).toEqual([
      ['well-pit', 'healthy', 'offline', 3500],
      ['well-pit', 'offline', 'unknown', 1000],
    ]);
  });
});

describe('site effects to alarm inputs, with the loops read from the config in the test', () => {
  it('a loop\'s own latching and policy are used for its conditions', () => {
    const config = parseConfig(`
site: { name: T }
decoders: [{ id: main, port: /dev/ttyACM0 }]
loops:
  - { id: store, name: S, decoder: main, input: 2, latch_trouble: true, trouble_escalation: wiring }
contacts: [{ id: office, name: O, email: o@example.org }]
escalation:
  wiring: { steps: [{ after: 0m, notify: [office] }] }
storage: { path: x.db }
`);
    const effect: SiteEffect = { kind: 'loop', loopId: 'store', atMs: 0, effect: { kind: 'state', from: 'healthy', to: 'open', atUs: 0, reason: 'test' } };
    expect(alarmInputsFor(loopsById(config), effect, new Set())).toEqual([
      { kind: 'raise', source: 'store', loopId: 'store', condition: 'open', latched: true, policy: 'wiring' },
    ]);
  });
});
