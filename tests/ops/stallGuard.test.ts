import { describe, expect, it } from 'vitest';
import { createStallGuard, type StallReport } from '../../src/ops/stallGuard.js';

/** A fake clock and timer: `block(ms)` models synchronous work that keeps every timer from running. */
function fakeTime() {
  let nowMs = 0;
  let pending: { at: number; callback: () => void } | null = null;
  return {
    now: () => nowMs,
    setTimer: (callback: () => void, delayMs: number) => {
      const entry = { at: nowMs + delayMs, callback };
      pending = entry;
      return () => {
        if (pending === entry) pending = null;
      };
    },
    /** Lets time pass with the event loop free: the timer fires on time. */
    advance(ms: number) {
      const end = nowMs + ms;
      while (pending && pending.at <= end) {
        const due = pending;
        pending = null;
        nowMs = due.at;
        due.callback();
      }
      nowMs = end;
    },
    /** The event loop is blocked for `ms`, then the overdue timer runs at once. */
    block(ms: number, during?: () => void) {
      during?.();
      nowMs += ms;
      const due = pending;
      if (due && due.at <= nowMs) {
        pending = null;
        due.callback();
      }
    },
    get armed() {
      return pending !== null;
    },
  };
}

describe('createStallGuard', () => {
  it('stays quiet while the loop keeps time and reports a block longer than the threshold', () => {
    const time = fakeTime();
    const reports: StallReport[] = [];
    const guard = createStallGuard({ thresholdMs: 3000, intervalMs: 500, onStall: (r) => reports.push(r), now: time.now, setTimer: time.setTimer });
    guard.start();
    time.advance(60_000);
    expect(reports).toEqual([]);

    time.advance(200); // the next tick is due 300 ms from now
    time.block(5000, () => {
      guard.activity = 'retention';
    });
    expect(guard.stalls).toBe(1);
    expect(reports).toHaveLength(1);
    // Due at +300 ms, ran at +5000 ms: 4700 ms late.
    expect(reports[0]).toMatchObject({ blockedMs: 4700, activity: 'retention', activities: ['retention'] });
  });

  it('names the job even when it set and reset the activity before the late tick ran', () => {
    const time = fakeTime();
    const reports: StallReport[] = [];
    const guard = createStallGuard({ onStall: (r) => reports.push(r), now: time.now, setTimer: time.setTimer });
    guard.start();
    time.block(4000, () => {
      guard.run('backup', () => 'done');
    });
    expect(guard.activity).toBe('idle');
    expect(reports.map((r) => r.activity)).toEqual(['backup']);
  });

  it('does not count a delay at or under the threshold', () => {
    const time = fakeTime();
    const reports: StallReport[] = [];
    const guard = createStallGuard({ thresholdMs: 3000, intervalMs: 500, onStall: (r) => reports.push(r), now: time.now, setTimer: time.setTimer });
    guard.start();
    time.block(3500); // due at 500, ran at 3500: exactly 3000 ms late
    expect(guard.stalls).toBe(0);
    time.block(3501); // re-armed at 3500, due at 4000, ran at 7001: 3001 ms late
    expect(guard.stalls).toBe(1);
    expect(reports[0]!.activity).toBe('idle');
  });

  it('keeps counting when the reporter throws, and stops cleanly', () => {
    const time = fakeTime();
    const guard = createStallGuard({
      onStall: () => {
        throw new Error('log sink gone');
      },
      now: time.now,
      setTimer: time.setTimer,
    });
    guard.start();
    time.block(10_000);
    time.block(10_000);
    expect(guard.stalls).toBe(2);
    guard.stop();
    expect(time.armed).toBe(false);
  });

  it('restores the previous activity after an async job, also when it fails', async () => {
    const time = fakeTime();
    const guard = createStallGuard({ onStall: () => {}, now: time.now, setTimer: time.setTimer });
    guard.activity = 'ingest';
    await guard.run('vacuum', async () => 1);
    expect(guard.activity).toBe('ingest');
    await expect(guard.run('vacuum', async () => Promise.reject(new Error('disk')))).rejects.toThrow('disk');
    expect(guard.activity).toBe('ingest');
    expect(() => guard.run('x', () => { throw new Error('sync'); })).toThrow('sync');
    expect(guard.activity).toBe('ingest');
  });

  it('refuses a threshold that is not a positive number, with a code', () => {
    expect(() => createStallGuard({ thresholdMs: 0, onStall: () => {} })).toThrow(expect.objectContaining({ code: 'PW_STALL_BAD_OPTION' }));
  });

  it('works with the real timer without holding the process open', () => {
    const guard = createStallGuard({ onStall: () => {} });
    guard.start();
    guard.stop();
    expect(guard.stalls).toBe(0);
  });
});
