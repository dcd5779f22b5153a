import { createSimulator, type SimLine } from '../../src/sim/createSimulator.js';
import { scenarioSchema, type ScenarioInput } from '../../src/sim/scenarioSchema.js';

/**
 * Protocol lines from the project's own simulated decoder: real HELLO/EDGE/TICK lines with CRCs, the
 * same bytes the ingest path gets from hardware.
 */
export interface StreamOptions {
  loops: number;
  /** Decoder time to generate, ms. */
  durationMs: number;
  periodMs?: number;
  jitter?: number;
  tickMs?: number;
  events?: ScenarioInput['events'];
  seed?: number;
}

export function simulatedLines(options: StreamOptions): SimLine[] {
  const simulator = openSimulatedDecoder(options);
  return simulator.advanceTo(Math.round(options.durationMs * 1000));
}

export function openSimulatedDecoder(options: Omit<StreamOptions, 'durationMs'>) {
  const scenario = scenarioSchema.parse({
    description: 'benchmark stream',
    seed: options.seed ?? 7,
    decoder: { inputs: options.loops, tick_ms: options.tickMs ?? 200 },
    loops: Array.from({ length: options.loops }, (_, i) => ({
      input: i + 1,
      period_ms: options.periodMs ?? 500,
      pulse_ms: 1,
      jitter: options.jitter ?? 0.1,
    })),
    events: options.events ?? [],
  } satisfies ScenarioInput);
  return createSimulator(scenario);
}

/** Mean bytes per line on the wire, LF included (protocol lines are ASCII: one byte per character). */
export function meanWireBytes(lines: readonly SimLine[]): number {
  let total = 0;
  for (const { line } of lines) total += line.length + 1;
  return total / lines.length;
}

/** Every `everyMs` one loop (in turn) freezes for `forMs`: a state change and an alarm in a steady stream. */
export function freezeEvents(loops: number, durationMs: number, everyMs: number, forMs: number): NonNullable<ScenarioInput['events']> {
  const events: NonNullable<ScenarioInput['events']> = [];
  for (let at = everyMs, n = 0; at + forMs < durationMs; at += everyMs, n++) {
    const input = (n % loops) + 1;
    events.push({ at, input, action: 'freeze' }, { at: at + forMs, input, action: 'thaw' });
  }
  return events;
}
