import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS } from '../../src/classify/index.js';
import { createSimulator } from '../../src/sim/createSimulator.js';
import { scenarioSchema } from '../../src/sim/scenarioSchema.js';
import { indexSite, initialSiteState, stepSite } from '../../src/site/siteStep.js';
import type { SiteEffect, SiteState } from '../../src/site/siteTypes.js';
import { refCrcHex, refLine } from './fixtures/refLine.js';

/**
 * Protocol lines fuzzed through the pure site step (decoder session + every loop's classifier): a
 * line that breaks the protocol (issue 2: bad CRC, bad syntax, unknown type, out-of-range field,
 * over 120 bytes) is dropped and counted. It never throws, and it never changes a loop's state or
 * the decoder's sequence and clock expectations — so a stream with junk spliced in classifies
 * exactly like the clean stream. Every bad line is bad by construction (sealed, where it matters,
 * with the registry's `crc` package), never by asking our own parser.
 */
const SEED = 60_606;
const LOOPS = 4;
const T0 = Date.UTC(2026, 0, 22, 5, 0, 0);

const index = indexSite({
  loops: Array.from({ length: LOOPS }, (_, i) => ({ id: `loop-${i + 1}`, decoderId: 'yard', input: i + 1, settings: DEFAULT_LOOP_SETTINGS })),
  decoders: [{ id: 'yard', silenceMs: 2000 }],
});

/** A real stream from the simulator: healthy loops, then a freeze and a cut, so states vary. */
function validStream(): Array<{ atMs: number; line: string }> {
  const simulator = createSimulator(
    scenarioSchema.parse({
      decoder: { inputs: LOOPS, firmware: 'fuzz-1', tick_ms: 200 },
      seed: 9,
      loops: Array.from({ length: LOOPS }, (_, i) => ({ input: i + 1, period_ms: 500, pulse_ms: 1, jitter: 0.1 })),
      events: [
        { at: 6000, input: 2, action: 'freeze' },
        { at: 9000, input: 3, action: 'cut' },
        { at: 11_000, input: 3, action: 'repair' },
      ],
    }),
  );
  return simulator.advanceTo(14_000_000).map((l) => ({ atMs: T0 + l.atUs / 1000, line: l.line }));
}
const STREAM = validStream();

const bodies = [
  'HELLO 1 4 fuzz-1',
  'EDGE 17 1234567 2 H',
  'EDGE 18 1234568 2 N',
  'TICK 19 1400000 NNON',
  'FAULT 20 1500000 SUPPLY',
];

const wrongCrc = fc.tuple(fc.constantFrom(...bodies), fc.integer({ min: 1, max: 0xffff }), fc.boolean()).map(([body, flip, lower]) => {
  const right = Number.parseInt(refCrcHex(body), 16);
  const hex = (right ^ flip).toString(16).padStart(4, '0');
  return `${body}*${lower ? hex : hex.toUpperCase()}`;
});

/** One byte of a sealed line changed: CRC-16 detects every error burst of up to 16 bits (a property of any degree-16 CRC). */
const flippedByte = fc.tuple(fc.constantFrom(...bodies), fc.nat(), fc.integer({ min: 1, max: 127 })).map(([body, at, xor]) => {
  const line = refLine(body);
  const i = at % body.length;
  const changed = String.fromCharCode(line.charCodeAt(i) ^ xor);
  return `${line.slice(0, i)}${changed}${line.slice(i + 1)}`;
});

/** Correctly sealed, but against the protocol's syntax or ranges. */
const sealedButWrong = fc
  .constantFrom(
    'PING 1 2 3',
    'edge 21 1000 1 H',
    'EDGE 21 1000 0 H',
    'EDGE 21 1000 65 H',
    'EDGE 21 1000 1 X',
    'EDGE 21 1000 1 h',
    'EDGE 65536 1000 1 H',
    'EDGE 21 4294967296 1 H',
    'EDGE -1 1000 1 H',
    'EDGE 21 -5 1 H',
    'EDGE 21 1000 1',
    'EDGE 21 1000 1 H N',
    'EDGE 21  1000 1 H',
    'EDGE 21 1000 1 H ',
    ' EDGE 21 1000 1 H',
    'EDGE\t21 1000 1 H',
    'EDGE 2.5 1000 1 H',
    'EDGE 0x15 1000 1 H',
    'EDGE 21 1e3 1 H',
    'TICK 21 1000 NNXN',
    'TICK 21 1000',
    'FAULT 21 1000 MELTDOWN',
    'FAULT 21 1000',
    'HELLO 2 4 fuzz-1',
    'HELLO 1 0 fuzz-1',
    'HELLO 1 65 fuzz-1',
    'HELLO 1 4 this-firmware-name-is-far-too-long',
    'HELLO 1 4 bad/name',
    'HELLO 1 4',
    'EDGE 21 1000 1 Ñ',
    '',
  )
  .map((body) => refLine(body));

/**
 * Well-formed for the protocol in general but wrong for this decoder: a loop past the count its HELLO
 * announced, a TICK with the wrong number of bands. Out of range, so dropped like any other bad line —
 * including its seq and time, which must not move the decoder's expectations.
 */
const pastAnnounced = [
  ['an EDGE for loop 5 of 4', 'EDGE 21 1000 5 H'],
  ['an EDGE for loop 5 of 4 with a far-off time', 'EDGE 21 4000000000 5 N'],
  ['an EDGE for loop 5 of 4 with a far-off seq', 'EDGE 60000 1000 5 N'],
  ['a TICK with 3 bands for 4 loops', 'TICK 21 1000 NNN'],
  ['a TICK with 5 bands for 4 loops', 'TICK 21 1000 NNNNN'],
] as const;

const overLength = fc.tuple(fc.constantFrom('TICK 21 1000 ', 'EDGE 21 1000 1 H ', 'HELLO 1 4 '), fc.integer({ min: 121, max: 400 })).map(([start, length]) =>
  refLine(start + 'N'.repeat(Math.max(0, length - start.length))),
);

/** Anything at all, except the rare string that happens to end in a checksum matching what precedes it. */
const randomJunk = fc.string({ unit: 'binary', maxLength: 160 }).filter((s) => {
  const m = /^(.*)\*([0-9A-Fa-f]{4})\r?$/s.exec(s);
  return !m || refCrcHex(m[1]!) !== m[2]!.toUpperCase();
});

const badLine = fc.oneof(wrongCrc, flippedByte, sealedButWrong, overLength, randomJunk);

/** Feeds the stream (with `junk` spliced in before the given positions); returns what the loops did. */
function run(junk: ReadonlyMap<number, string[]>): { loopEffects: string[]; state: SiteState; thrown: unknown } {
  let state = initialSiteState(index.definition, T0);
  const loopEffects: string[] = [];
  const record = (effects: readonly SiteEffect[]) => {
    for (const e of effects) if (e.kind === 'loop' || e.kind === 'decoder-offline' || e.kind === 'decoder-online') loopEffects.push(JSON.stringify(e));
  };
  try {
    STREAM.forEach(({ atMs, line }, i) => {
      for (const bad of junk.get(i) ?? []) {
        const stepped = stepSite(index, state, { kind: 'line', decoderId: 'yard', line: bad }, atMs);
        record(stepped.effects);
        state = stepped.state;
      }
      const stepped = stepSite(index, state, { kind: 'line', decoderId: 'yard', line }, atMs);
      record(stepped.effects);
      state = stepped.state;
    });
  } catch (thrown) {
    return { loopEffects, state, thrown };
  }
  return { loopEffects, state, thrown: null };
}

describe('protocol lines fuzzed through the site step', () => {
  const clean = run(new Map());

  it('the clean stream does reach every state worth disturbing (healthy, tripped, open, back)', () => {
    expect(clean.thrown).toBeNull();
    const reached = new Set(clean.loopEffects.map((e) => (JSON.parse(e) as { effect: { to?: string } }).effect.to).filter(Boolean));
    expect([...reached]).toEqual(expect.arrayContaining(['healthy', 'tripped', 'open']));
  });

  /** The state just before position `at` of the clean stream, then one bad line: nothing but a counted drop. */
  function expectOnlyDropped(at: number, bad: string): void {
    let state = initialSiteState(index.definition, T0);
    for (const { atMs, line } of STREAM.slice(0, at)) state = stepSite(index, state, { kind: 'line', decoderId: 'yard', line }, atMs).state;
    const nowMs = STREAM[at]!.atMs;
    let stepped: ReturnType<typeof stepSite>;
    expect(() => (stepped = stepSite(index, state, { kind: 'line', decoderId: 'yard', line: bad }, nowMs))).not.toThrow();
    const before = state.decoders.yard!;
    const after = stepped!.state.decoders.yard!;
    expect(stepped!.state.loops, `loops changed by ${JSON.stringify(bad)}`).toEqual(state.loops);
    expect(stepped!.effects.map((e) => (e.kind === 'decoder' ? e.event.kind : e.kind)), JSON.stringify(bad)).toEqual(['dropped']);
    expect(after.session.counters.dropped).toBe(before.session.counters.dropped + 1);
    expect(after.session.counters.lines).toBe(before.session.counters.lines + 1);
    // The decoder did not "speak": silence, sequence and clock expectations are as they were.
    expect([after.lastValidAtMs, after.latestDecoderUs, after.offline], JSON.stringify(bad)).toEqual([before.lastValidAtMs, before.latestDecoderUs, before.offline]);
    expect([after.session.expectedSeq, after.session.lastRawTime, after.session.lastDecoderUs, after.session.counters.lost], JSON.stringify(bad)).toEqual([
      before.session.expectedSeq,
      before.session.lastRawTime,
      before.session.lastDecoderUs,
      before.session.counters.lost,
    ]);
  }

  it('one bad line, at any point of the stream: no throw, dropped and counted, nothing else changes', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: STREAM.length - 1 }), badLine, (at, bad) => expectOnlyDropped(at, bad)),
      { seed: SEED, numRuns: 400 },
    );
  });

  it.each(pastAnnounced)('%s: dropped without moving seq, clock or any loop', (_label, body) => {
    // Mid-stream, with every loop healthy and a seq expectation in place.
    expectOnlyDropped(Math.floor(STREAM.length / 3), refLine(body));
  });

  it('junk spliced anywhere into a stream: the loops do exactly what they do on the clean stream', () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(fc.integer({ min: 1, max: STREAM.length - 1 }), badLine), { minLength: 1, maxLength: 60 }), (splices) => {
        const junk = new Map<number, string[]>();
        for (const [at, bad] of splices) junk.set(at, [...(junk.get(at) ?? []), bad]);
        const dirty = run(junk);
        expect(dirty.thrown).toBeNull();
        expect(dirty.loopEffects).toEqual(clean.loopEffects);
        expect(dirty.state.loops).toEqual(clean.state.loops);
        expect(dirty.state.decoders.yard!.session.counters.dropped).toBe(splices.length);
      }),
      { seed: SEED + 1, numRuns: 60 },
    );
  });
});
