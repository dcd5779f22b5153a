import type { Scenario } from './scenarioSchema.js';
import { createSimulator } from './createSimulator.js';

export interface RunSimulatorOptions {
  /** Receives each line without its LF, at (about) its time. */
  write(line: string): void;
  /** Simulated seconds per real second. Default 1. */
  speed?: number;
  /** Stop after this much simulated time (µs); run for ever when absent. */
  untilUs?: number;
  /** Host clock in ms (monotonic). Default performance.now. */
  now?: () => number;
  /** Schedules `fn` after `ms`; returns a function that cancels it. Default setTimeout. */
  setTimer?: (fn: () => void, ms: number) => () => void;
  /** Longest sleep between catch-ups, in real ms. Default 50. */
  maxSleepMs?: number;
}

export interface SimulatorRun {
  /** Stops writing; safe to call more than once. */
  stop(): void;
  /** Settles when the run reaches untilUs or is stopped. */
  readonly done: Promise<void>;
}

const defaultTimer = (fn: () => void, ms: number) => {
  const handle = setTimeout(fn, ms);
  return () => clearTimeout(handle);
};

/**
 * The real-time shell around the pure simulator: on each wake-up it generates everything up to the
 * current (scaled) host time and writes it. Lines carry decoder timestamps, so a late wake-up only
 * delays delivery; it never changes what is sent.
 */
export function runSimulator(scenario: Scenario, options: RunSimulatorOptions): SimulatorRun {
  const simulator = createSimulator(scenario);
  const speed = options.speed ?? 1;
  const now = options.now ?? (() => performance.now());
  const setTimer = options.setTimer ?? defaultTimer;
  const maxSleepMs = options.maxSleepMs ?? 50;
  const startMs = now();
  let cancel: (() => void) | null = null;
  let stopped = false;
  let finish!: () => void;
  const done = new Promise<void>((resolve) => (finish = resolve));

  function stop(): void {
    if (stopped) return;
    stopped = true;
    cancel?.();
    cancel = null;
    finish();
  }

  function pump(): void {
    cancel = null;
    if (stopped) return;
    const elapsedUs = Math.floor((now() - startMs) * 1000 * speed);
    const targetUs = options.untilUs === undefined ? elapsedUs : Math.min(elapsedUs, options.untilUs);
    for (const { line } of simulator.advanceTo(targetUs)) {
      if (stopped) return;
      options.write(line);
    }
    if (options.untilUs !== undefined && targetUs >= options.untilUs) {
      stop();
      return;
    }
    const dueUs = Math.min(simulator.nextAtUs(), options.untilUs ?? Number.POSITIVE_INFINITY);
    const sleepMs = Math.min(maxSleepMs, Math.max(1, (dueUs - elapsedUs) / 1000 / speed));
    cancel = setTimer(pump, sleepMs);
  }

  pump();
  return { stop, done };
}
