import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS, type LoopSettings } from '../../src/classify/loopSettings.js';
import { encodeLine } from '../../src/protocol/encodeLine.js';
import { indexSite, initialSiteState, stepSite } from '../../src/site/siteStep.js';
import { referenceClassify, type RefBand, type RefEvent, type RefFrame } from './referenceClassifier.js';

/**
 * The real classifier (decoder session + site step + loop classifier, fed protocol text) against the
 * reference in tests/reference/referenceClassifier.ts (fed the same frames as plain data), over
 * generated decoder streams: heartbeat jitter, lost TICKs, glitches, long pulses, opens, shorts, missing
 * pulses, 32-bit time wrap and HELLO mid-stream. They must agree on every state, every intermittent flag
 * change, and every time within 1 µs. Where they disagreed, the README's rules decided.
 */
// 10,000 in every ordinary run (CI included); fewer per mutant under StrykerJS, which runs this file once per mutant.
const RUNS = Number(process.env.REFERENCE_RUNS ?? (process.env.STRYKER_MUTATOR_WORKER === undefined ? 10_000 : 500));

type Segment =
  | { kind: 'pulses'; periodsUs: number[]; widthsUs: number[] }
  | { kind: 'quiet'; us: number }
  | { kind: 'open'; us: number }
  | { kind: 'short'; us: number };

const widthArb = fc.oneof(
  { weight: 6, arbitrary: fc.integer({ min: 300, max: 19_000 }) }, // a valid heartbeat
  { weight: 1, arbitrary: fc.integer({ min: 5, max: 199 }) }, // a glitch
  { weight: 1, arbitrary: fc.integer({ min: 20_001, max: 150_000 }) }, // a long pulse
  { weight: 1, arbitrary: fc.constantFrom(200, 20_000) }, // exactly the width limits
);
const segmentArb: fc.Arbitrary<Segment> = fc.oneof(
  {
    weight: 5,
    arbitrary: fc.integer({ min: 1, max: 5 }).chain((n) =>
      fc.record({
        kind: fc.constant('pulses' as const),
        // 500 ms ± jitter, now and then far out of tolerance
        periodsUs: fc.array(fc.oneof({ weight: 5, arbitrary: fc.integer({ min: 420_000, max: 580_000 }) }, fc.integer({ min: 150_000, max: 900_000 }), fc.constantFrom(250_000, 750_000)), { minLength: n, maxLength: n }),
        widthsUs: fc.array(widthArb, { minLength: n, maxLength: n }),
      }),
    ),
  },
  { weight: 2, arbitrary: fc.record({ kind: fc.constant('quiet' as const), us: fc.oneof(fc.integer({ min: 100_000, max: 2_600_000 }), fc.constantFrom(1_500_000, 1_499_999, 1_500_001)) }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('open' as const), us: fc.oneof(fc.integer({ min: 10_000, max: 450_000 }), fc.constantFrom(199_999, 200_000, 200_001)) }) },
  { weight: 1, arbitrary: fc.record({ kind: fc.constant('short' as const), us: fc.oneof(fc.integer({ min: 150_000, max: 320_000 }), fc.constantFrom(199_999, 200_000, 200_001)) }) },
);

const sessionArb = fc.record({
  segments: fc.array(segmentArb, { minLength: 1, maxLength: 4 }),
  tickEveryUs: fc.constantFrom(100_000, 200_000, 250_000),
  // Raw decoder time at the session's start: near zero after a restart, or just before the 32-bit wrap.
  rawStart: fc.oneof(fc.integer({ min: 0, max: 2_000_000 }), fc.integer({ min: 2 ** 32 - 4_000_000, max: 2 ** 32 - 1 })),
  lossSeed: fc.array(fc.integer({ min: 0, max: 9 }), { minLength: 64, maxLength: 64 }),
});

const settingsArb: fc.Arbitrary<LoopSettings> = fc.record({
  tripMs: fc.constantFrom(1500, 1500, 1200, 2000),
  healthyPulses: fc.constantFrom(3, 3, 1, 2, 4),
  intermittentCount: fc.constantFrom(2, 3),
  intermittentWindowMs: fc.constantFrom(1500, 3000, 6000, 600_000),
}).map((s) => ({ ...DEFAULT_LOOP_SETTINGS, ...s }));

interface Session {
  segments: Segment[];
  tickEveryUs: number;
  rawStart: number;
  lossSeed: number[];
}

function framesOf(sessions: readonly Session[]): RefFrame[] {
  const frames: RefFrame[] = [];
  for (const session of sessions) {
    const changes: Array<{ at: number; band: RefBand }> = [];
    let t = 100_000;
    for (const seg of session.segments) {
      if (seg.kind === 'pulses') {
        for (let i = 0; i < seg.periodsUs.length; i++) {
          changes.push({ at: t, band: 'H' }, { at: t + seg.widthsUs[i]!, band: 'N' });
          t += Math.max(seg.periodsUs[i]!, seg.widthsUs[i]! + 1000);
        }
      } else if (seg.kind === 'quiet') {
        t += seg.us;
      } else {
        changes.push({ at: t, band: seg.kind === 'open' ? 'O' : 'H' }, { at: t + seg.us, band: 'N' });
        t += seg.us + 50_000;
      }
    }
    const end = t + 300_000;
    // Merge edges and TICKs (an edge and a TICK at the same instant: edge first).
    const items: Array<{ at: number; type: 'EDGE' | 'TICK'; band: RefBand }> = [];
    let band: RefBand = 'N';
    let next = 0;
    for (let tick = 0; tick <= end; tick += session.tickEveryUs) {
      while (next < changes.length && changes[next]!.at <= tick) {
        band = changes[next]!.band;
        items.push({ at: changes[next]!.at, type: 'EDGE', band });
        next++;
      }
      items.push({ at: tick, type: 'TICK', band });
    }
    frames.push({ type: 'HELLO' });
    let seq = 0;
    let tickIndex = 0;
    for (const [i, item] of items.entries()) {
      const raw = (session.rawStart + item.at) % 2 ** 32;
      const thisSeq = seq;
      seq = (seq + 1) % 65536;
      // Lost frames: TICKs at N only (never the session's first frame); runs of one to three.
      if (item.type === 'TICK') {
        const roll = session.lossSeed[tickIndex++ % session.lossSeed.length]!;
        if (i > 0 && item.band === 'N' && roll === 0) continue;
      }
      frames.push({ type: item.type, seq: thisSeq, raw, band: item.band });
    }
  }
  return frames;
}

function lineOf(frame: RefFrame): string {
  const body = frame.type === 'HELLO' ? 'HELLO 1 1 ref-1' : frame.type === 'EDGE' ? `EDGE ${frame.seq} ${frame.raw} 1 ${frame.band}` : `TICK ${frame.seq} ${frame.raw} ${frame.band}`;
  return encodeLine(body).replace(/\n$/, '');
}

/** The real classifier over the same frames, as protocol lines through the site step. */
function realClassify(frames: readonly RefFrame[], settings: LoopSettings): RefEvent[] {
  const index = indexSite({ loops: [{ id: 'loop', decoderId: 'd', input: 1, settings }], decoders: [{ id: 'd', silenceMs: 2000 }] });
  let state = initialSiteState(index.definition, 0);
  const out: RefEvent[] = [];
  for (const frame of frames) {
    const stepped = stepSite(index, state, { kind: 'line', decoderId: 'd', line: lineOf(frame) }, 0);
    state = stepped.state;
    for (const effect of stepped.effects) {
      if (effect.kind !== 'loop') continue;
      const e = effect.effect;
      if (e.kind === 'state' && e.to !== 'offline') out.push({ what: 'state', to: e.to, atUs: e.atUs });
      else if (e.kind === 'intermittent') out.push({ what: 'intermittent', on: e.on, atUs: e.atUs });
    }
  }
  return out;
}

function agree(real: RefEvent[], ref: RefEvent[]): boolean {
  if (real.length !== ref.length) return false;
  return real.every((r, i) => {
    const f = ref[i]!;
    if (r.what !== f.what || Math.abs(r.atUs - f.atUs) > 1) return false;
    return r.what === 'state' ? r.to === (f as typeof r).to : r.on === (f as typeof r).on;
  });
}

describe('the real classifier agrees with the reference written from the README rules', () => {
  it(`on ${RUNS} generated decoder streams: every state, flag and time within 1 µs`, () => {
    fc.assert(
      fc.property(fc.array(sessionArb as fc.Arbitrary<Session>, { minLength: 1, maxLength: 2 }), settingsArb, (sessions, settings) => {
        const frames = framesOf(sessions);
        const real = realClassify(frames, settings);
        const ref = referenceClassify(frames, settings);
        if (!agree(real, ref)) expect({ real }).toEqual({ real: ref });
      }),
      { numRuns: RUNS, seed: 0x5eed_0013 },
    );
  });

  it('the generator really produces what the rules are about (a sanity census over 500 streams)', () => {
    const seen = new Set<string>();
    fc.assert(
      fc.property(fc.array(sessionArb as fc.Arbitrary<Session>, { minLength: 1, maxLength: 3 }), settingsArb, (sessions, settings) => {
        const frames = framesOf(sessions);
        for (const e of referenceClassify(frames, settings)) seen.add(e.what === 'state' ? e.to : `intermittent ${e.on}`);
        let lastSeq: number | null = null;
        for (const f of frames) {
          if (f.type === 'HELLO') {
            lastSeq = null;
            continue;
          }
          if (lastSeq !== null && f.seq !== (lastSeq + 1) % 65536) seen.add('lost');
          if (f.raw < 1_000_000) seen.add('near zero');
          lastSeq = f.seq;
        }
        if (frames.filter((f) => f.type === 'HELLO').length > 1) seen.add('hello mid-stream');
      }),
      { numRuns: 500, seed: 1 },
    );
    expect([...seen].sort()).toEqual(
      ['healthy', 'hello mid-stream', 'intermittent false', 'intermittent true', 'lost', 'near zero', 'open', 'shorted', 'tripped', 'unknown'].sort(),
    );
  });
});
