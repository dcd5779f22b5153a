import { afterEach, describe, expect, it } from 'vitest';
import { sessionCounters } from '../../src/protocol/decoderSession.js';
import { scenarioSchema, type ScenarioInput } from '../../src/sim/scenarioSchema.js';
import { openCoreRun, replayScenario, T0, type CoreRun } from './fixtures/coreHarness.js';
import { refLine } from './fixtures/refLine.js';

/**
 * Issue 16 items 2, 3 and 9 and the mass-trip rule: a decoder whose clock jumps back or far forward
 * without a HELLO, lines delivered twice, a session without HELLO carrying TICKs of the wrong width,
 * and an ingest gap that leaves every loop without pulses at once — none of them is a freeze, so
 * none may trip a loop. Each is shown as one decoder trouble instead. Eight healthy loops, the core
 * on a synthetic clock (host time = decoder time as sent), lines rewritten on the way by `tamper`.
 */
const LOOPS = 8;
const RUN_MS = 60_000;
const AT_MS = 30_000;

function healthyScenario(events: NonNullable<ScenarioInput['events']> = []) {
  return scenarioSchema.parse({
    description: 'eight healthy loops',
    decoder: { inputs: LOOPS, firmware: 'clock-1', tick_ms: 200 },
    seed: 16,
    loops: Array.from({ length: LOOPS }, (_, i) => ({ input: i + 1, period_ms: 500, pulse_ms: 1, jitter: 0.1 })),
    events,
  } satisfies ScenarioInput);
}

/** Splits a sealed line into its fields (body before `*`); the raw time is µs since the simulator started. */
const fieldsOf = (line: string) => line.split('*')[0]!.split(' ');
const rawTimeOf = (fields: string[]) => (fields[0] === 'HELLO' ? null : Number(fields[2]));
const seal = (fields: string[]) => refLine(fields.join(' '));

let run: CoreRun | null = null;
afterEach(() => {
  run?.close();
  run = null;
});

const decoderFaults = (r: CoreRun) => r.alarms().filter((a) => a.source === 'yard' && a.condition === 'decoder-fault');

describe('decoder clock jumps (issue 16 item 2)', () => {
  it('a clock jump back of 12 s without HELLO is a restart: no loop trips, one decoder-fault trouble', () => {
    run = openCoreRun(LOOPS);
    replayScenario(run, healthyScenario(), RUN_MS, {
      tamper: (line) => {
        const f = fieldsOf(line);
        const raw = rawTimeOf(f);
        if (raw === null || raw < AT_MS * 1000) return line;
        f[2] = String(raw - 12_000_000);
        return seal(f);
      },
    });
    expect(run.faultChanges()).toEqual([]);
    expect(decoderFaults(run)).toHaveLength(1);
    // Pulses still arrive after the step: the loops learn again and are healthy.
    for (let i = 1; i <= LOOPS; i++) expect(run.core.loopLive(`bldg-0${i}`)!.state).toBe('healthy');
  });

  it('a clock jump 20 s forward, far beyond host time, is a decoder fault: no loop trips', () => {
    run = openCoreRun(LOOPS);
    replayScenario(run, healthyScenario(), RUN_MS, {
      tamper: (line) => {
        const f = fieldsOf(line);
        const raw = rawTimeOf(f);
        if (raw === null || raw < AT_MS * 1000) return line;
        f[2] = String(raw + 20_000_000);
        return seal(f);
      },
    });
    expect(run.faultChanges()).toEqual([]);
    expect(decoderFaults(run)).toHaveLength(1);
    for (let i = 1; i <= LOOPS; i++) expect(run.core.loopLive(`bldg-0${i}`)!.state).toBe('healthy');
  });
});

describe('duplicated lines (issue 16 item 3)', () => {
  it('a line received twice is dropped and counted as a duplicate: no lost frames, no noisy link, no trip', () => {
    run = openCoreRun(LOOPS);
    let doubled = 0;
    const scenario = healthyScenario();
    // Every 40th line twice.
    replayScenario(run, scenario, RUN_MS, {
      tamper: (line, index) => {
        if (index % 40 !== 7 || line.startsWith('HELLO')) return line;
        doubled += 1;
        return [line, line];
      },
    });
    const counts = sessionCounters(run.core.decoderRuntime('yard')!.session);
    expect(doubled).toBeGreaterThan(50);
    expect(counts.duplicates).toBe(doubled);
    expect(counts.lost).toBe(0);
    expect(run.alarms().filter((a) => a.condition === 'link-noisy')).toEqual([]);
    expect(run.faultChanges()).toEqual([]);
  });
});

describe('no HELLO in the session (issue 16 item 9)', () => {
  it('TICKs of 12 bands against 8 configured inputs are dropped as range, not applied', () => {
    run = openCoreRun(LOOPS);
    replayScenario(run, healthyScenario(), RUN_MS, {
      tamper: (line) => {
        const f = fieldsOf(line);
        if (f[0] === 'HELLO') return null;
        const raw = rawTimeOf(f)!;
        if (f[0] !== 'TICK' || raw < AT_MS * 1000 || raw > (AT_MS + 1000) * 1000) return line;
        f[3] = 'O'.repeat(12);
        return seal(f);
      },
    });
    expect(sessionCounters(run.core.decoderRuntime('yard')!.session).droppedBy.range).toBeGreaterThanOrEqual(4);
    expect(run.faultChanges()).toEqual([]);
  });
});

describe('every loop of a decoder tripping at once (issue 16, "also seen")', () => {
  it('an ingest gap that leaves all eight loops without pulses is one decoder trouble, not eight trips', () => {
    run = openCoreRun(LOOPS);
    replayScenario(run, healthyScenario(), RUN_MS, {
      tamper: (line) => {
        const raw = rawTimeOf(fieldsOf(line));
        // 1.8 s of lines lost: longer than the 1.5 s trip window, shorter than the 2 s silence.
        return raw !== null && raw >= AT_MS * 1000 && raw < (AT_MS + 1800) * 1000 ? null : line;
      },
    });
    expect(run.faultChanges()).toEqual([]);
    expect(decoderFaults(run)).toHaveLength(1);
    for (let i = 1; i <= LOOPS; i++) expect(run.core.loopLive(`bldg-0${i}`)!.state).toBe('healthy');
  });

  it('a real freeze of all eight still trips every loop, after one hold-back', () => {
    run = openCoreRun(LOOPS);
    const events = Array.from({ length: LOOPS }, (_, i) => ({ at: AT_MS, input: i + 1, action: 'freeze' as const }));
    replayScenario(run, healthyScenario(events), RUN_MS);
    const trips = run.faultChanges().filter((c) => c.to === 'tripped');
    expect(new Set(trips.map((t) => t.loopId)).size).toBe(LOOPS);
    // The first trip round (about 1.5 s after the freeze) is held back and started over; the loops trip
    // again one trip window later: well within 10 s of the freeze.
    for (const t of trips) expect(t.atMs - T0).toBeLessThan(AT_MS + 10_000);
  });
});
