/**
 * Notices when the event loop has been blocked (a long synchronous job, a slow disk under a sync call):
 * a short timer is re-armed on every tick and measures how late it fires. While the loop is blocked
 * no timer can run, so the lateness of the next tick is the length of the stall.
 *
 * What was running is told by the daemon through `guard.activity = 'retention'` (or `guard.run(...)`).
 * A blocking job usually sets and resets the activity before the late tick can run, so the guard
 * remembers every activity that was current at any moment since the previous tick.
 */

export interface StallReport {
  blockedMs: number;
  /** What was running during the stall: the activities seen since the previous tick, joined by ", ". */
  activity: string;
  activities: string[];
  /** Host monotonic time (ms, from `now`) at which the stall was noticed. */
  atMs: number;
}

export type CancelTimer = () => void;
export type SetTimer = (callback: () => void, delayMs: number) => CancelTimer;

export interface StallGuardOptions {
  /** Lateness above this counts as a stall. Default 3000 ms. */
  thresholdMs?: number;
  /** How often the guard ticks. Default 500 ms; short enough that a stall is reported promptly. */
  intervalMs?: number;
  onStall: (report: StallReport) => void;
  /** Monotonic milliseconds. Default performance.now(). */
  now?: () => number;
  /** Default: an unref'd setTimeout, so the guard never keeps the process alive on its own. */
  setTimer?: SetTimer;
}

export const IDLE_ACTIVITY = 'idle';

export interface StallGuard {
  /** What the daemon is doing now; set it before a job and back to 'idle' after. */
  activity: string;
  /** Stalls seen since the guard was created. */
  readonly stalls: number;
  /** Runs `job` with `activity` set, restoring the previous activity afterwards (also for async jobs). */
  run<T>(activity: string, job: () => T): T;
  start(): void;
  stop(): void;
}

const defaultSetTimer: SetTimer = (callback, delayMs) => {
  const handle = setTimeout(callback, delayMs);
  handle.unref();
  return () => clearTimeout(handle);
};

export function createStallGuard(options: StallGuardOptions): StallGuard {
  const thresholdMs = options.thresholdMs ?? 3000;
  const intervalMs = options.intervalMs ?? 500;
  const now = options.now ?? (() => performance.now());
  const setTimer = options.setTimer ?? defaultSetTimer;
  if (!(thresholdMs > 0)) throw Object.assign(new Error('stall guard: thresholdMs must be above 0'), { code: 'PW_STALL_BAD_OPTION' });
  if (!(intervalMs > 0)) throw Object.assign(new Error('stall guard: intervalMs must be above 0'), { code: 'PW_STALL_BAD_OPTION' });

  let current = IDLE_ACTIVITY;
  let seenSinceTick = new Set<string>([current]);
  let stalls = 0;
  let cancel: CancelTimer | null = null;
  let expectedAt = 0;

  const arm = () => {
    expectedAt = now() + intervalMs;
    cancel = setTimer(tick, intervalMs);
  };

  const tick = () => {
    cancel = null;
    const lateMs = now() - expectedAt;
    const seen = [...seenSinceTick];
    seenSinceTick = new Set([current]);
    if (lateMs > thresholdMs) {
      stalls += 1;
      const busy = seen.filter((a) => a !== IDLE_ACTIVITY);
      const activities = busy.length > 0 ? busy : [IDLE_ACTIVITY];
      try {
        options.onStall({ blockedMs: Math.round(lateMs), activity: activities.join(', '), activities, atMs: now() });
      } catch {
        // A failing reporter must not stop the guard; the count above still records the stall.
      }
    }
    arm();
  };

  const guard: StallGuard = {
    get activity() {
      return current;
    },
    set activity(value: string) {
      current = value;
      seenSinceTick.add(value);
    },
    get stalls() {
      return stalls;
    },
    run<T>(activity: string, job: () => T): T {
      const previous = current;
      guard.activity = activity;
      let result: T;
      try {
        result = job();
      } catch (err) {
        guard.activity = previous;
        throw err;
      }
      if (result instanceof Promise) {
        return result.finally(() => {
          guard.activity = previous;
        }) as T;
      }
      guard.activity = previous;
      return result;
    },
    start() {
      if (cancel) return;
      seenSinceTick = new Set([current]);
      arm();
    },
    stop() {
      cancel?.();
      cancel = null;
    },
  };
  return guard;
}
