import { afterEach, describe, expect, it } from 'vitest';
import { scenarioSchema, type ScenarioInput } from '../../src/sim/scenarioSchema.js';
import { openCoreRun, replayScenario, T0, type CoreRun } from './fixtures/coreHarness.js';
import { refLine } from './fixtures/refLine.js';
import { seededRandom } from './fixtures/seeded.js';
import { loopIdOf } from './fixtures/siteYaml.js';

/**
 * What a decoder does to the line in real life — restarts (HELLO mid-stream), its 32-bit µs clock
 * wrapping, frames lost, lines garbled — must neither raise an alarm that is not there nor hide one
 * that is. The truth is the scenario itself: which loop was frozen, cut or shorted, and when. The
 * monitor core runs on a synthetic clock (fast, and the same every run).
 *
 * The timing bounds come from the protocol's defaults (issue 2): trip = no valid pulse for 1500 ms
 * (3 × 500 ms), open/short = band held 200 ms, TICK at least every 250 ms (the simulator sends one
 * every 200 ms), return to normal after 3 good pulses.
 */
const LOOPS = 8;
const PERIOD_MS = 500;
const JITTER = 0.15;
const RUN_MS = 140_000;
const TICK_MS = 200;

interface Truth {
  input: number;
  condition: 'tripped' | 'open' | 'shorted';
  startMs: number;
  endMs: number;
}

const FAULTS: readonly Truth[] = [
  { input: 3, condition: 'tripped', startMs: 40_000, endMs: 70_000 },
  { input: 5, condition: 'open', startMs: 90_000, endMs: 96_000 },
  { input: 6, condition: 'shorted', startMs: 110_000, endMs: 114_000 },
];

/**
 * When the alarm may be raised, from the truth alone. Tripped: 1500 ms after the last pulse, which came
 * at most one (jittered) period before the freeze — or two, if garbling hid the last one. Open and
 * short: 200 ms after the band changed, plus a TICK or two if the EDGE itself was lost. The host
 * learns of it with the next line that arrives, at most a TICK or two later.
 */
function raiseWindow(truth: Truth): [number, number] {
  const slowestPeriod = PERIOD_MS * (1 + JITTER);
  if (truth.condition === 'tripped') return [truth.startMs + 1500 - 2 * slowestPeriod, truth.startMs + 1500 + 2 * TICK_MS];
  return [truth.startMs + 200, truth.startMs + 200 + 3 * TICK_MS];
}

function baseScenario(extra: { decoder?: Partial<ScenarioInput['decoder']>; events?: NonNullable<ScenarioInput['events']> } = {}) {
  const faultEvents: NonNullable<ScenarioInput['events']> = [];
  const actions = { tripped: ['freeze', 'thaw'], open: ['cut', 'repair'], shorted: ['short', 'clear-short'] } as const;
  for (const f of FAULTS) {
    faultEvents.push({ at: f.startMs, input: f.input, action: actions[f.condition][0] });
    faultEvents.push({ at: f.endMs, input: f.input, action: actions[f.condition][1] });
  }
  return scenarioSchema.parse({
    description: 'decoder quirks: three real faults among eight loops',
    decoder: { inputs: LOOPS, firmware: 'quirk-2', tick_ms: TICK_MS, ...extra.decoder },
    seed: 42,
    loops: Array.from({ length: LOOPS }, (_, i) => ({ input: i + 1, period_ms: PERIOD_MS, pulse_ms: 1, jitter: JITTER })),
    events: [...faultEvents, ...(extra.events ?? [])],
  } satisfies ScenarioInput);
}

/**
 * Garbles a line so that it is certainly bad: a character changed in the body (CRC-16 catches every
 * error burst of up to 16 bits — ITU-T V.41 / CRC catalogue property), the checksum cut off, junk
 * appended past the checksum, or the line cut short.
 */
function garble(line: string, pick: number): string {
  const star = line.lastIndexOf('*');
  switch (pick % 4) {
    case 0: {
      const at = Math.max(0, Math.floor(star / 2));
      const c = line.charCodeAt(at);
      return `${line.slice(0, at)}${String.fromCharCode(c === 0x5a ? 0x59 : c + 1)}${line.slice(at + 1)}`;
    }
    case 1:
      return line.slice(0, star);
    case 2:
      return `${line}~#`;
    default:
      return line.slice(0, Math.max(1, star - 3));
  }
}

/** Garbles `fraction` of the lines, picked by a seeded draw, and counts them. */
function corrupter(fraction: number, seed: number) {
  const random = seededRandom(seed);
  let garbled = 0;
  return {
    tamper: (line: string) => {
      if (random.next() >= fraction) return line;
      garbled += 1;
      return garble(line, random.int(0, 3));
    },
    get garbled() {
      return garbled;
    },
  };
}

let run: CoreRun | null = null;
afterEach(() => {
  run?.close();
  run = null;
});

/** Exactly the true faults were raised, each once, in its window, and each returned to normal after its repair. */
function expectTruthOnly(r: CoreRun, label: string): void {
  const alarms = r.alarms();
  const summary = alarms.map((a) => `${a.source}/${a.condition}`);
  expect(summary, `${label}: alarms raised`).toEqual(FAULTS.map((f) => `${loopIdOf(f.input)}/${f.condition}`));
  for (const truth of FAULTS) {
    const alarm = alarms.find((a) => a.loopId === loopIdOf(truth.input) && a.condition === truth.condition)!;
    const [from, to] = raiseWindow(truth);
    const raisedAt = alarm.raisedAtMs - T0;
    expect(raisedAt, `${label}: ${truth.condition} on input ${truth.input} raised at ${raisedAt} ms`).toBeGreaterThanOrEqual(from);
    expect(raisedAt, `${label}: ${truth.condition} on input ${truth.input} raised at ${raisedAt} ms`).toBeLessThanOrEqual(to);
    // Return to normal needs 3 good pulses after the repair: well inside 5 s even with garbled lines.
    expect(alarm.clearedAtMs, `${label}: ${truth.condition} on input ${truth.input} cleared`).not.toBeNull();
    const clearedAt = alarm.clearedAtMs! - T0;
    expect(clearedAt).toBeGreaterThanOrEqual(truth.endMs);
    expect(clearedAt).toBeLessThanOrEqual(truth.endMs + 5000);
  }
  // Loops with nothing wrong never left healthy for a fault state, not even briefly.
  const faulty = new Set(FAULTS.map((f) => loopIdOf(f.input)));
  expect(r.faultChanges().filter((c) => !faulty.has(c.loopId)), `${label}: fault states on healthy loops`).toEqual([]);
}

describe('decoder quirks against the truth of the scenario (synthetic clock)', () => {
  it('a clean line: the three faults, nothing else (the baseline the others are held to)', () => {
    run = openCoreRun(LOOPS);
    replayScenario(run, baseScenario(), RUN_MS);
    expectTruthOnly(run, 'clean');
  });

  it('decoder restarts (HELLO mid-stream) during a freeze and while all is well', () => {
    run = openCoreRun(LOOPS);
    replayScenario(run, baseScenario({ events: [{ at: 55_000, action: 'restart' }, { at: 100_000, action: 'restart' }] }), RUN_MS);
    expectTruthOnly(run, 'restart');
    expect(run.core.decoderRuntime('yard')!.session.counters.hellos).toBe(3);
  });

  it('the 32-bit µs clock wraps mid-stream, just before the trip is confirmed', () => {
    run = openCoreRun(LOOPS);
    // 2^32 µs = 4294.967296 s per turn; starting 41 s before the wrap puts it at T+41 s.
    replayScenario(run, baseScenario({ decoder: { wrap_clock_after: 41_000 } }), RUN_MS);
    expectTruthOnly(run, 'wrap');
    expect(run.core.decoderRuntime('yard')!.session.lastDecoderUs!).toBeGreaterThan(2 ** 32);
  });

  it('lost frames, including the very EDGE that starts a fault', () => {
    run = openCoreRun(LOOPS);
    const events: NonNullable<ScenarioInput['events']> = [
      { at: 20_000, action: 'lose-frames', count: 4 },
      { at: 39_999, action: 'lose-frames', count: 6 },
      { at: 89_999, action: 'lose-frames', count: 3 },
      { at: 109_999, action: 'lose-frames', count: 2 },
      { at: 125_000, action: 'lose-frames', count: 12 },
    ];
    replayScenario(run, baseScenario({ events }), RUN_MS);
    expectTruthOnly(run, 'lost frames');
    expect(run.core.decoderRuntime('yard')!.session.counters.lost).toBe(4 + 6 + 3 + 2 + 12);
  });

  it('5 % of lines garbled on the way (bad checksum, cut short, junk, missing checksum)', () => {
    run = openCoreRun(LOOPS);
    const garbling = corrupter(0.05, 7);
    const { lines } = replayScenario(run, baseScenario(), RUN_MS, { tamper: garbling.tamper });
    expectTruthOnly(run, '5 % garbled');
    const counters = run.core.decoderRuntime('yard')!.session.counters;
    expect(counters.dropped).toBe(garbling.garbled);
    expect(garbling.garbled / lines).toBeGreaterThan(0.04);
    expect(garbling.garbled / lines).toBeLessThan(0.06);
  });

  it('all of it at once: restarts, a wrap, lost frames and 5 % garbled lines', () => {
    run = openCoreRun(LOOPS);
    const garbling = corrupter(0.05, 8);
    const scenario = baseScenario({
      // The wrap first: a restart sets the decoder clock back to 0, far from the wrap.
      decoder: { wrap_clock_after: 30_000 },
      events: [
        { at: 55_000, action: 'restart' },
        { at: 20_000, action: 'lose-frames', count: 5 },
        { at: 89_999, action: 'lose-frames', count: 3 },
        { at: 100_000, action: 'restart' },
      ],
    });
    replayScenario(run, scenario, RUN_MS, { tamper: garbling.tamper });
    expectTruthOnly(run, 'everything');
    const counters = run.core.decoderRuntime('yard')!.session.counters;
    expect(counters.hellos).toBe(3);
    expect(counters.dropped).toBe(garbling.garbled);
  });

  it('two pulses whose start EDGE was garbled still prove the node alive (minimal case)', () => {
    // One loop, a 1 ms pulse every 500 ms (the trade's usual heartbeat; issue 2's defaults). Pulses 5
    // and 6 each lose their N→H EDGE to a garbled line; their H→N EDGE arrives, one seq after the gap.
    // An H→N EDGE on a loop already at N, right after a one-frame gap, can only mean the node pulled
    // the line: the node is alive and nothing was tripped.
    run = openCoreRun(1);
    const frames: Array<{ atMs: number; body: (seq: number, timeUs: number) => string; garbled: boolean }> = [];
    for (let tick = 200; tick <= 6000; tick += 200) frames.push({ atMs: tick, body: (q, t) => `TICK ${q} ${t} N`, garbled: false });
    for (let pulse = 1; pulse <= 11; pulse++) {
      const startMs = pulse * 500 + 37;
      frames.push({ atMs: startMs, body: (q, t) => `EDGE ${q} ${t} 1 H`, garbled: pulse === 5 || pulse === 6 });
      frames.push({ atMs: startMs + 1, body: (q, t) => `EDGE ${q} ${t} 1 N`, garbled: false });
    }
    frames.sort((a, b) => a.atMs - b.atMs);
    run.core.linkStatus('yard', { state: 'connected' }, T0);
    run.core.line('yard', refLine('HELLO 1 1 quirk-2'), T0);
    frames.forEach(({ atMs, body, garbled }, seq) => {
      const line = refLine(body(seq, atMs * 1000));
      // Garbled on the way: the checksum no longer matches (a changed digit in the body).
      run!.core.line('yard', garbled ? line.replace(/ 1 H\*/, ' 1 I*') : line, T0 + atMs);
    });
    run.core.tick(T0 + 6000);
    expect(run.faultChanges(), 'a loop whose every pulse reached the decoder was reported tripped').toEqual([]);
  });

  it('5 % garbled lines do not make the link "noisy"; 25 % do', () => {
    const garbledRun = (fraction: number, seed: number) => {
      const r = openCoreRun(LOOPS);
      const garbling = corrupter(fraction, seed);
      replayScenario(r, baseScenario(), 4 * 60_000, { tamper: garbling.tamper });
      const noisy = r.alarms().filter((a) => a.condition === 'link-noisy');
      r.close();
      return noisy;
    };
    // A garbled line is dropped and also leaves a seq gap; counting it twice would double the rate.
    expect(garbledRun(0.05, 21)).toEqual([]);
    expect(garbledRun(0.25, 22)).toHaveLength(1);
  });
});
