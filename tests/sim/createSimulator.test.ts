import { describe, expect, it } from 'vitest';
import { parseLine } from '../../src/protocol/parseLine.js';
import { createSimulator } from '../../src/sim/createSimulator.js';
import { loadScenario, parseScenario } from '../../src/sim/loadScenario.js';
import { decodeAll, highSpans } from './decodeAll.js';

const demo = loadScenario(new URL('../../config/demo.scenario.yaml', import.meta.url).pathname);
const S = 1_000_000;

function scenario(events: string, extra = '') {
  return parseScenario(`decoder: { inputs: 3, tick_ms: 200${extra} }
seed: 42
loops:
  - { input: 1, period_ms: 500, pulse_ms: 1, jitter: 0.1 }
  - { input: 2, period_ms: 500, pulse_ms: 1 }
events:
${events || '  []'}
`);
}

describe('simulator', () => {
  it('is deterministic for a seed, whatever steps it is advanced in', () => {
    const once = createSimulator(demo).advanceTo(120 * S);
    const stepped = createSimulator(demo);
    const pieces = [];
    for (let t = 0; t <= 120 * S; t += 37_123) pieces.push(...stepped.advanceTo(t));
    pieces.push(...stepped.advanceTo(120 * S));
    expect(pieces).toEqual(once);
    expect(createSimulator(demo).advanceTo(120 * S)).toEqual(once);
    const other = createSimulator({ ...demo, seed: demo.seed + 1 }).advanceTo(120 * S);
    expect(other).not.toEqual(once);
  });

  it('writes only lines that parse cleanly: no drops, no lost frames, HELLO first', () => {
    const lines = createSimulator(demo).advanceTo(7 * 60 * S);
    expect(lines[0]).toMatchObject({ atUs: 0 });
    expect(parseLine(lines[0]!.line)).toEqual({ ok: true, frame: { type: 'HELLO', version: 1, loops: 8, firmware: 'larkspur-sim-1' } });
    const { counters } = decodeAll(lines);
    expect(counters).toMatchObject({ dropped: 0, lost: 0, hellos: 1, silentRestarts: 0, lateFrames: 0 });
    expect(counters.frames).toBe(lines.length);
    for (let i = 1; i < lines.length; i++) expect(lines[i]!.atUs).toBeGreaterThanOrEqual(lines[i - 1]!.atUs);
  });

  it('sends a TICK every tick_ms with every input, unwired ones reading O', () => {
    const { events } = decodeAll(createSimulator(demo).advanceTo(10 * S));
    const ticks = events.filter((e) => e.kind === 'tick');
    // tick_ms: 200 in the scenario file; the protocol asks for at least one every 250 ms.
    expect(ticks).toHaveLength(50);
    ticks.forEach((t, i) => {
      expect(t.decoderUs).toBe((i + 1) * 200_000);
      expect(t.kind === 'tick' && t.bands.slice(6)).toEqual(['O', 'O']);
    });
  });

  it('pulses each healthy loop with the scenario period, pulse width and jitter', () => {
    const { events } = decodeAll(createSimulator(demo).advanceTo(60 * S));
    const spans = highSpans(events, 1);
    // demo.scenario.yaml: period_ms 500, pulse_ms 1, jitter 0.04 → intervals within 480..520 ms.
    expect(spans.length).toBeGreaterThanOrEqual(115);
    for (const [, width] of spans) expect(width).toBe(1000);
    for (let i = 1; i < spans.length; i++) {
      const interval = spans[i]![0] - spans[i - 1]![0];
      expect(interval).toBeGreaterThanOrEqual(480_000);
      expect(interval).toBeLessThanOrEqual(520_000);
    }
  });

  it('plays the demo timeline: pump-house cut 25 s to 70 s, glasshouse silent from 40 s to 6 min', () => {
    const { events } = decodeAll(createSimulator(demo).advanceTo(7 * 60 * S));
    const pumpEdges = events.flatMap((e) => (e.kind === 'edge' && e.input === 2 && e.band !== 'H' ? [e] : []));
    expect(pumpEdges.find((e) => e.band === 'O')?.decoderUs).toBe(25 * S);
    expect(pumpEdges.find((e) => e.band === 'N' && e.decoderUs > 25 * S)?.decoderUs).toBe(70 * S);
    const pumpPulses = highSpans(events, 2).map(([at]) => at);
    expect(pumpPulses.some((at) => at > 25 * S && at < 70 * S)).toBe(false);
    expect(pumpPulses.filter((at) => at > 70 * S && at < 72 * S).length).toBeGreaterThanOrEqual(3);

    const glass = highSpans(events, 3).map(([at]) => at);
    expect(glass.some((at) => at >= 40 * S && at < 360 * S)).toBe(false);
    expect(glass.filter((at) => at < 40 * S).length).toBeGreaterThanOrEqual(75);
    expect(glass.filter((at) => at >= 360 * S && at < 362 * S).length).toBeGreaterThanOrEqual(3);
    // The others never miss a beat (no gap beyond the 520 ms the jitter allows).
    for (const input of [1, 4, 5, 6]) {
      const at = highSpans(events, input).map(([t]) => t);
      for (let i = 1; i < at.length; i++) expect(at[i]! - at[i - 1]!).toBeLessThanOrEqual(520_000);
    }
  });

  it('goes on after the last event with the loops as they were left', () => {
    const sim = createSimulator(scenario('  - { at: 1s, action: freeze, input: 2 }'));
    sim.advanceTo(3600 * S);
    const { events } = decodeAll(sim.advanceTo(3610 * S).map((l) => l));
    expect(events.filter((e) => e.kind === 'edge' && e.input === 2)).toHaveLength(0);
    expect(events.filter((e) => e.kind === 'edge' && e.input === 1).length).toBeGreaterThan(30);
  });

  it('short holds H and clear-short releases it', () => {
    const { events } = decodeAll(createSimulator(scenario('  - { at: 2s, action: short, input: 2 }\n  - { at: 5s, action: clear-short, input: 2 }')).advanceTo(8 * S));
    const spans = highSpans(events, 2);
    expect(spans.find(([, w]) => w > 1000)).toEqual([2 * S, 3 * S]);
    expect(events.some((e) => e.kind === 'tick' && e.decoderUs === 4 * S && e.bands[1] === 'H')).toBe(true);
  });

  it('noise makes H glitches shorter than any valid pulse, only while it lasts', () => {
    const { events, counters } = decodeAll(
      createSimulator(scenario('  - { at: 2s, action: noise, input: 2, for: 3s, rate_hz: 40, glitch_us: [20, 150] }')).advanceTo(8 * S),
    );
    expect(counters.dropped).toBe(0);
    const glitches = highSpans(events, 2).filter(([, w]) => w !== 1000);
    // 40 per second for 3 s: Poisson, so allow a wide band around 120.
    expect(glitches.length).toBeGreaterThan(70);
    expect(glitches.length).toBeLessThan(180);
    for (const [at, width] of glitches) {
      expect(at).toBeGreaterThanOrEqual(2 * S);
      expect(at).toBeLessThan(5 * S);
      // Under the classifier's 0.2 ms minimum pulse width (the default pulse_min_ms).
      expect(width).toBeLessThan(200);
    }
  });

  it('lose-frames uses up exactly that many seq numbers', () => {
    const { counters, events } = decodeAll(createSimulator(scenario('  - { at: 3s, action: lose-frames, count: 7 }')).advanceTo(6 * S));
    expect(counters.lost).toBe(7);
    expect(events.filter((e) => e.kind === 'lost')).toHaveLength(1);
  });

  it('restart sends HELLO mid-stream and starts seq and clock again', () => {
    const lines = createSimulator(scenario('  - { at: 3s, action: restart }')).advanceTo(6 * S);
    const hellos = lines.filter((l) => l.line.startsWith('HELLO'));
    expect(hellos.map((h) => h.atUs)).toEqual([0, 3 * S]);
    const after = lines.slice(lines.indexOf(hellos[1]!) + 1);
    const first = parseLine(after[0]!.line);
    expect(first.ok && first.frame.type !== 'HELLO' && first.frame.seq).toBe(0);
    expect(first.ok && first.frame.type !== 'HELLO' && first.frame.time).toBe(after[0]!.atUs - 3 * S);
    const { counters, events } = decodeAll(lines);
    expect(counters).toMatchObject({ lost: 0, dropped: 0, hellos: 2, silentRestarts: 0 });
    const times = events.flatMap((e) => ('decoderUs' in e ? [e.decoderUs] : []));
    for (let i = 1; i < times.length; i++) expect(times[i]!).toBeGreaterThanOrEqual(times[i - 1]!);
  });

  it('corrupt spoils about that fraction of checksums, and only while it lasts', () => {
    const lines = createSimulator(scenario('  - { at: 10s, action: corrupt, fraction: 0.05, for: 100s }')).advanceTo(120 * S);
    const { counters } = decodeAll(lines);
    const during = lines.filter((l) => l.atUs >= 10 * S && l.atUs < 110 * S).length;
    expect(counters.dropped).toBe(counters.droppedBy.crc);
    expect(counters.dropped / during).toBeGreaterThan(0.03);
    expect(counters.dropped / during).toBeLessThan(0.07);
    const bad = lines.filter((l) => !parseLine(l.line).ok);
    for (const l of bad) expect(l.atUs >= 10 * S && l.atUs < 110 * S).toBe(true);
  });

  it('wrap_clock_after starts the clock so it wraps that far into the run, and the session unwraps it', () => {
    const lines = createSimulator(scenario('', ', wrap_clock_after: 5s')).advanceTo(10 * S);
    const raw = lines.map((l) => parseLine(l.line)).flatMap((o) => (o.ok && o.frame.type !== 'HELLO' ? [o.frame.time] : []));
    // 2^32 µs is the protocol's time modulus: 5 s before it is 4294967296 − 5000000.
    expect(raw[0]).toBeGreaterThan(4294967296 - 5_000_000);
    expect(raw.at(-1)).toBeLessThan(5_000_001);
    const { events, counters } = decodeAll(lines);
    const ticks = events.filter((e) => e.kind === 'tick').map((e) => ('decoderUs' in e ? e.decoderUs : 0));
    for (let i = 1; i < ticks.length; i++) expect(ticks[i]! - ticks[i - 1]!).toBe(200_000);
    expect(ticks.at(-1)! - ticks[0]!).toBe(10 * S - 200_000);
    expect(counters).toMatchObject({ dropped: 0, lost: 0, silentRestarts: 0 });
  });
});
