/**
 * A clock the bench moves by hand, for running the real daemon through simulated days in minutes.
 *
 * `installFakeClock` replaces the global `Date.now`, `setTimeout`, `setInterval`, `clearTimeout` and
 * `clearInterval` of this process. Timers then fire only when `advanceTo` moves the clock past them,
 * in time order, each with the clock set to its own due time, and with a turn of the real event loop
 * after each one so that the I/O and promises it starts (SQLite writes, a mail file, an HTTP reply)
 * finish before the next timer runs. Node's own internals (sockets, http timeouts, the serial port's
 * reads) keep the real clock: only the monitor's own scheduling is simulated, which is what a soak
 * over days needs. Used only in a bench child process; nothing in src/ knows about it.
 */

export interface FakeClock {
  now(): number;
  /** Runs every timer due at or before `at`, in order, then leaves the clock at `at`. */
  advanceTo(at: number): Promise<void>;
  /** Timers waiting (for the bench's own check that nothing piles up). */
  pending(): number;
  /** Puts the real clock and timer functions back. */
  uninstall(): void;
  /** The real functions, for the bench's own waits. */
  readonly real: { setTimeout: typeof setTimeout; clearTimeout: typeof clearTimeout; setImmediate: typeof setImmediate };
}

interface Entry {
  id: number;
  at: number;
  seq: number;
  /** The delay it was set with; a timeout's refresh() waits it again. */
  delayMs: number;
  repeatMs: number | null;
  fn: (...args: unknown[]) => void;
  args: unknown[];
  refed: boolean;
}

export function installFakeClock(startMs: number): FakeClock {
  const real = { setTimeout: globalThis.setTimeout, clearTimeout: globalThis.clearTimeout, setImmediate: globalThis.setImmediate };
  let current = startMs;
  let nextId = 1;
  let seq = 0;
  const entries = new Map<number, Entry>();

  // Node's Timeout objects: unref/ref/hasRef/refresh are called by the daemon; the number is for clearTimeout(id).
  const handleOf = (entry: Entry) => ({
    unref() {
      entry.refed = false;
      return this;
    },
    ref() {
      entry.refed = true;
      return this;
    },
    hasRef: () => entry.refed,
    refresh() {
      entry.at = current + entry.delayMs;
      return this;
    },
    [Symbol.toPrimitive]: () => entry.id,
    _fakeId: entry.id,
  });
  const schedule = (fn: (...args: unknown[]) => void, delay: unknown, args: unknown[], repeat: boolean) => {
    const ms = Math.max(1, Number(delay) || 0);
    const entry: Entry = { id: nextId++, at: current + ms, seq: seq++, delayMs: ms, repeatMs: repeat ? ms : null, fn, args, refed: true };
    entries.set(entry.id, entry);
    return handleOf(entry);
  };
  const cancel = (handle: unknown) => {
    if (handle === undefined || handle === null) return;
    const id = typeof handle === 'object' && '_fakeId' in (handle as object) ? (handle as { _fakeId: number })._fakeId : Number(handle);
    entries.delete(id);
  };

  const g = globalThis as unknown as Record<string, unknown>;
  const saved = { setTimeout: g.setTimeout, setInterval: g.setInterval, clearTimeout: g.clearTimeout, clearInterval: g.clearInterval, dateNow: Date.now };
  g.setTimeout = (fn: (...a: unknown[]) => void, delay?: number, ...args: unknown[]) => schedule(fn, delay, args, false);
  g.setInterval = (fn: (...a: unknown[]) => void, delay?: number, ...args: unknown[]) => schedule(fn, delay, args, true);
  g.clearTimeout = cancel;
  g.clearInterval = cancel;
  Date.now = () => current;

  const turn = () => new Promise<void>((resolve) => real.setImmediate(resolve));

  return {
    now: () => current,
    pending: () => entries.size,
    real,
    uninstall() {
      g.setTimeout = saved.setTimeout;
      g.setInterval = saved.setInterval;
      g.clearTimeout = saved.clearTimeout;
      g.clearInterval = saved.clearInterval;
      Date.now = saved.dateNow;
    },
    async advanceTo(at) {
      for (;;) {
        let due: Entry | null = null;
        for (const entry of entries.values()) {
          if (entry.at > at) continue;
          if (!due || entry.at < due.at || (entry.at === due.at && entry.seq < due.seq)) due = entry;
        }
        if (!due) break;
        current = Math.max(current, due.at);
        if (due.repeatMs === null) entries.delete(due.id);
        else {
          due.at += due.repeatMs;
          due.seq = seq++;
        }
        due.fn(...due.args);
        await turn();
      }
      current = Math.max(current, at);
      await turn();
    },
  };
}
