import { crc16ccitt } from 'crc';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { beforeAll, describe, expect, it } from 'vitest';
import type { Band } from '../../src/model/band.js';
import { checkLine, initialConformance, judgeConformance } from '../../src/protocol/conformance.js';
import { initialDecoderSession, stepDecoderSession, type DecoderSession } from '../../src/protocol/decoderSession.js';
import type { DecoderEvent } from '../../src/protocol/decoderEvent.js';
import { parseLine } from '../../src/protocol/parseLine.js';
import type { Frame } from '../../src/protocol/frame.js';
import { parseScenario } from '../../src/sim/loadScenario.js';
import { scenarioSchema, type ScenarioInput } from '../../src/sim/scenarioSchema.js';
import { findPackageRoot } from '../../src/store/openDatabase.js';
import { buildFirmware, CYCLES_PER_US, runFirmware, truthFromPins, waveformFromScenario, type Capture, type Waveform } from '../../bench/firmwareSim.js';

/**
 * The real decoder firmware (firmware/decoder) under simavr, driven by waveforms from pairwatch's own
 * scenario simulator, which also gives the truth: each band change and the cycle it reached the pins.
 * The design's timestamp bound (README, "The decoder firmware"): a change is stamped when its
 * interrupt has read the ports, so never before it happened, and at worst after the timer routine and
 * another pin-change routine that began just before it: under 20 µs. The 0.5 µs timer count is
 * floored to whole µs, so a stamp may read up to 1 µs early.
 */
const MAX_LATE_US = 20;
const MAX_EARLY_US = 1;
/** The firmware's promise (README): a TICK at least every 200 ms (it sends one every 98.304 ms). */
const TICK_LIMIT_US = 200_000;

const scenario = (input: ScenarioInput) => scenarioSchema.parse(input);
const eight = (extra: Partial<ScenarioInput['loops'] extends Array<infer L> | undefined ? L : never> = {}) =>
  Array.from({ length: 8 }, (_, i) => ({ input: i + 1, period_ms: 500, pulse_ms: 1, jitter: 0.04, ...extra }));

type Parsed = { cycle: number; text: string; frame: Frame };

function framesOf(capture: Capture): Parsed[] {
  return capture.lines.map((l) => {
    const parsed = parseLine(l.text);
    if (!parsed.ok) throw new Error(`firmware line "${l.text}" does not parse: ${parsed.detail}`);
    return { ...l, frame: parsed.frame };
  });
}

/** Every band change reported once, with its band, within the bound; nothing reported that did not happen. */
function expectEdgesMatch(capture: Capture, waveform: Waveform): number[] {
  const truth = truthFromPins(capture, waveform.initial);
  const edges = framesOf(capture).flatMap((p) => (p.frame.type === 'EDGE' ? [p.frame] : []));
  expect(edges.length, 'one EDGE per band change').toBe(truth.length);
  const errors: number[] = [];
  for (let loop = 1; loop <= 8; loop++) {
    const want = truth.filter((t) => t.loop === loop);
    const got = edges.filter((e) => e.loop === loop);
    expect(got.map((e) => e.band), `loop ${loop} bands in order`).toEqual(want.map((t) => t.band));
    got.forEach((e, i) => {
      const error = (((e.time - want[i]!.timeUs) % 2 ** 32) + 2 ** 32 + 2 ** 31) % 2 ** 32 - 2 ** 31;
      errors.push(error);
    });
  }
  expect(Math.max(...errors), `late by at most ${MAX_LATE_US} µs`).toBeLessThanOrEqual(MAX_LATE_US);
  expect(Math.min(...errors), `early by at most ${MAX_EARLY_US} µs`).toBeGreaterThanOrEqual(-MAX_EARLY_US);
  return errors;
}

/** wireLimitUs: how far apart TICKs may leave on the wire (normal running: the same 200 ms). */
function expectSeqAndTicks(capture: Capture, wireLimitUs = TICK_LIMIT_US): void {
  const frames = framesOf(capture).filter((p) => p.frame.type !== 'HELLO');
  frames.forEach((p, i) => expect((p.frame as { seq: number }).seq, `seq of line ${i}`).toBe(i % 65536));
  const ticks = frames.filter((p) => p.frame.type === 'TICK');
  for (let i = 1; i < ticks.length; i++) {
    const dt = ((ticks[i]!.frame as { time: number }).time - (ticks[i - 1]!.frame as { time: number }).time + 2 ** 32) % 2 ** 32;
    expect(dt, 'TICK cadence in decoder time').toBeLessThanOrEqual(TICK_LIMIT_US);
    // And on the wire: the LF of each TICK leaves within the same limit of the one before.
    expect((ticks[i]!.cycle - ticks[i - 1]!.cycle) / CYCLES_PER_US, 'TICK cadence on the wire').toBeLessThanOrEqual(wireLimitUs);
  }
}

function conformanceOf(capture: Capture) {
  return judgeConformance(capture.lines.reduce((s, l) => checkLine(s, l.text), initialConformance()));
}

/** The server's own decoder session over the whole capture: what it accepted, dropped and counted lost. */
function serverView(capture: Capture): { session: DecoderSession; events: DecoderEvent[] } {
  let session = initialDecoderSession();
  const events: DecoderEvent[] = [];
  for (const l of capture.lines) {
    const step = stepDecoderSession(session, l.text);
    session = step.session;
    events.push(...step.events);
  }
  return { session, events };
}

beforeAll(() => buildFirmware(), 120_000);

describe('decoder firmware under simavr', () => {
  it('checksums every line with CRC-16/CCITT-FALSE, as the reference library computes it', async () => {
    // The catalogue's check value for "123456789" (Greg Cook, CRC RevEng catalogue, CRC-16/IBM-3740 alias CCITT-FALSE).
    expect(crc16ccitt('123456789')).toBe(0x29b1);
    const waveform = waveformFromScenario(scenario({ decoder: { inputs: 8 }, loops: eight() }), 0, 1_000_000);
    const capture = await runFirmware({ waveform, untilUs: 1_000_000 });
    expect(capture.lines.length).toBeGreaterThan(10);
    for (const { text } of capture.lines) {
      const [body, crc] = [text.slice(0, -5), text.slice(-4)];
      expect(text[text.length - 5]).toBe('*');
      expect(parseInt(crc!, 16), text).toBe(crc16ccitt(body!));
    }
    expect(capture.lines[0]!.text).toMatch(/^HELLO 1 8 pairwatch-avr-[0-9.]+\*/);
  });

  it("the demo's scenario around the pump-house cut (24-26.5 s): every band change once, within the bound", async () => {
    const demo = parseScenario(readFileSync(join(findPackageRoot(), 'config', 'demo.scenario.yaml'), 'utf8'));
    const waveform = waveformFromScenario(demo, 24_000_000, 26_500_000);
    expect(waveform.steps.some((s) => s.loop === 2 && s.band === 'O'), 'the window holds the cut').toBe(true);
    const capture = await runFirmware({ waveform, untilUs: 2_500_000 });
    expectEdgesMatch(capture, waveform);
    expectSeqAndTicks(capture);
    expect(conformanceOf(capture).filter((v) => !v.pass)).toEqual([]);
    // Inputs 7 and 8 are unwired in the demo: no current, band O, in every TICK.
    const ticks = framesOf(capture).flatMap((p) => (p.frame.type === 'TICK' ? [p.frame.bands.join('')] : []));
    expect(ticks.at(-1)).toBe('NONNNNOO');
  }, 60_000);

  it('shorts, cuts and glitches on all eight loops: every change reported, none filtered', async () => {
    const s = scenario({
      decoder: { inputs: 8 },
      seed: 7,
      loops: eight({ jitter: 0.2 }),
      events: [
        { at: 200, action: 'short', input: 5 },
        { at: 900, action: 'clear-short', input: 5 },
        { at: 300, action: 'cut', input: 6 },
        { at: 1200, action: 'repair', input: 6 },
        // Glitches of 20-150 µs: shorter than any valid pulse, still every one is an EDGE pair.
        { at: 100, action: 'noise', input: 1, for: 1300, rate_hz: 40, glitch_us: [20, 150] },
        { at: 100, action: 'noise', input: 8, for: 1300, rate_hz: 40, glitch_us: [20, 150] },
      ],
    });
    const waveform = waveformFromScenario(s, 0, 1_500_000);
    const capture = await runFirmware({ waveform, untilUs: 1_500_000 });
    expectEdgesMatch(capture, waveform);
    expectSeqAndTicks(capture);
    const bands = framesOf(capture).flatMap((p) => (p.frame.type === 'EDGE' ? [`${p.frame.loop}${p.frame.band}`] : []));
    expect(bands).toContain('5H');
    expect(bands).toContain('6O');
    expect(conformanceOf(capture).filter((v) => !v.pass)).toEqual([]);
  }, 60_000);

  it('crosses the 32-bit µs wrap when its clock starts 1 s before it', async () => {
    const clockStartUs = 2 ** 32 - 1_000_000;
    const waveform = waveformFromScenario(scenario({ decoder: { inputs: 8 }, seed: 3, loops: eight() }), 0, 2_000_000);
    const capture = await runFirmware({ waveform, untilUs: 2_000_000, clockStartUs });
    const times = framesOf(capture).flatMap((p) => (p.frame.type === 'HELLO' ? [] : [p.frame.time]));
    expect(times[0]).toBeGreaterThan(clockStartUs);
    expect(times.at(-1)!, 'time has wrapped past 0').toBeLessThan(1_500_000);
    expectEdgesMatch(capture, waveform);
    expectSeqAndTicks(capture);
    const time = conformanceOf(capture).find((v) => v.rule === 'time')!;
    expect(time.pass).toBe(true);
    expect(time.detail).toMatch(/crossed the 32-bit wrap 1 time/);
    // The server unwraps it: decoder time never goes back, nothing dropped.
    const { session } = serverView(capture);
    expect(session.counters.dropped).toBe(0);
    expect(session.counters.silentRestarts).toBe(0);
  }, 60_000);

  it('a burst above the link rate gives FAULT OVERRUN, never a silent loss, and the server accepts the stream', async () => {
    // 8 loops × 1000 glitches/s × 2 edges: 16,000 edges/s for 0.3 s, far above the ~800 lines/s the link carries.
    const burst = scenario({
      decoder: { inputs: 8 },
      seed: 11,
      loops: eight(),
      events: Array.from({ length: 8 }, (_, i) => ({ at: 300, action: 'noise' as const, input: i + 1, for: 300, rate_hz: 1000, glitch_us: [20, 60] as [number, number] })),
    });
    const waveform = waveformFromScenario(burst, 0, 1_500_000);
    const capture = await runFirmware({ waveform, untilUs: 1_500_000 });
    const frames = framesOf(capture);
    const overruns = frames.filter((p) => p.frame.type === 'FAULT' && p.frame.code === 'OVERRUN');
    expect(overruns.length).toBeGreaterThan(0);
    expectSeqAndTicks(capture);

    // Every true change not reported as an EDGE lies in a gap a FAULT OVERRUN announced: after the
    // FAULT's time and before the next frame's time.
    const truth = truthFromPins(capture, waveform.initial);
    const edgeKeys = new Set(frames.flatMap((p) => (p.frame.type === 'EDGE' ? [`${p.frame.loop}:${p.frame.band}:${p.frame.time}`] : [])));
    const gaps = overruns.map((o) => {
      const i = frames.indexOf(o);
      const next = frames.slice(i + 1).find((p) => p.frame.type !== 'HELLO');
      return { from: (o.frame as { time: number }).time, to: next ? (next.frame as { time: number }).time : Infinity };
    });
    let unreported = 0;
    for (const t of truth) {
      const reported = [...Array(MAX_LATE_US + MAX_EARLY_US + 1).keys()].some((d) => edgeKeys.has(`${t.loop}:${t.band}:${t.timeUs - MAX_EARLY_US + d}`));
      if (reported) continue;
      unreported++;
      expect(gaps.some((g) => t.timeUs >= g.from && t.timeUs <= g.to + MAX_LATE_US), `change at ${t.timeUs} µs on loop ${t.loop} is inside an announced gap`).toBe(true);
    }
    expect(unreported).toBeGreaterThan(0);

    const { session, events } = serverView(capture);
    expect(session.counters.dropped, 'no line dropped').toBe(0);
    expect(session.counters.lost, 'no seq gap').toBe(0);
    expect(events.filter((e) => e.kind === 'fault' && e.code === 'OVERRUN').length).toBe(overruns.length);
    expect(conformanceOf(capture).filter((v) => !v.pass)).toEqual([]);
    // After the burst the bands are right again: every TICK after it shows the pins as they were.
    const lastTime = truth.filter((t) => t.timeUs < 620_000).at(-1)!.timeUs;
    for (const p of frames) {
      if (p.frame.type !== 'TICK' || p.frame.time < lastTime) continue;
      const tickTime = p.frame.time;
      const bands: Band[] = [...waveform.initial];
      for (const t of truth) if (t.timeUs <= tickTime) bands[t.loop - 1] = t.band;
      expect(p.frame.bands.join(''), `TICK at ${tickTime}`).toBe(bands.join(''));
    }
  }, 60_000);

  it('a hang is ended by the watchdog: HELLO again, then FAULT RESTART with seq 0', async () => {
    const waveform = waveformFromScenario(scenario({ decoder: { inputs: 8 }, seed: 5, loops: eight() }), 0, 2_000_000);
    const capture = await runFirmware({ waveform, untilUs: 2_000_000, hangAtUs: 700_000 });
    expect(capture.resets.length, 'power-on and one watchdog reset').toBe(2);
    // WDTO_250MS: the watchdog's 128 kHz oscillator counts 32K cycles (datasheet, watchdog timer prescale select), 256 ms.
    const hangCycle = (10_000 + 700_000) * CYCLES_PER_US;
    // simavr times that oscillator exactly; the part's is only typical (±10 % from memory of the datasheet).
    const afterMs = (capture.resets[1]! - hangCycle) / CYCLES_PER_US / 1000;
    expect(afterMs).toBeGreaterThan(200);
    expect(afterMs).toBeLessThanOrEqual(300);
    const texts = capture.lines.map((l) => l.text.replace(/\*[0-9A-F]{4}$/, ''));
    const hellos = texts.flatMap((t, i) => (t.startsWith('HELLO ') ? [i] : []));
    expect(hellos.length).toBe(2);
    expect(texts[hellos[1]! + 1]).toMatch(/^FAULT 0 \d+ RESTART$/);
    expect(texts.slice(0, hellos[1]).some((t) => t.includes('RESTART')), 'no RESTART at power-on').toBe(false);
    const { events, session } = serverView(capture);
    expect(session.counters.dropped).toBe(0);
    expect(events.filter((e) => e.kind === 'hello').length).toBe(2);
    expect(events.some((e) => e.kind === 'fault' && e.code === 'RESTART')).toBe(true);
    expect(conformanceOf(capture).filter((v) => !v.pass)).toEqual([]);
  }, 60_000);

  it('reports FAULT SUPPLY when its supply sags below 4.4 V, and not at 5 V', async () => {
    const waveform = waveformFromScenario(scenario({ decoder: { inputs: 8 }, loops: eight() }), 0, 1_500_000);
    const capture = await runFirmware({ waveform, untilUs: 1_500_000, supply: [{ atUs: 800_000, mv: 4100 }] });
    const supply = framesOf(capture).filter((p) => p.frame.type === 'FAULT' && p.frame.code === 'SUPPLY');
    expect(supply.length).toBe(1);
    const atUs = supply[0]!.cycle / CYCLES_PER_US - 10_000;
    // Three readings out of range, one each TICK: reported 0.2-0.5 s after the sag.
    expect(atUs).toBeGreaterThan(800_000);
    expect(atUs).toBeLessThan(1_400_000);
    expect(framesOf(capture).filter((p) => p.cycle / CYCLES_PER_US - 10_000 < 800_000).some((p) => p.frame.type === 'FAULT')).toBe(false);
  }, 60_000);
});
