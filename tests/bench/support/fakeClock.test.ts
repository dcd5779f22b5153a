import { afterEach, describe, expect, it } from 'vitest';
import { installFakeClock, type FakeClock } from '../../../bench/support/fakeClock.js';

/**
 * The service soak's clock: if it ran timers early, late, out of order or twice, the soak would feed
 * the daemon a day that never happens. Expected orders follow Node's documented timer rules (a timer
 * fires no earlier than its delay; an interval repeats at its delay; equal due times keep the order
 * they were set in — Node's timers documentation), applied to hand-picked times.
 */
let clock: FakeClock | null = null;
afterEach(() => {
  clock?.uninstall();
  clock = null;
});

describe('the bench fake clock', () => {
  it('moves Date.now only when told, and fires timers in due order with the clock at each due time', async () => {
    const realNow = Date.now;
    clock = installFakeClock(1_000_000);
    expect(Date.now()).toBe(1_000_000);
    const fired: Array<[string, number]> = [];
    setTimeout(() => fired.push(['b', Date.now()]), 300);
    setTimeout(() => fired.push(['a', Date.now()]), 100);
    setTimeout(() => fired.push(['c', Date.now()]), 300);
    await clock.advanceTo(1_000_299);
    expect(fired).toEqual([['a', 1_000_100]]);
    await clock.advanceTo(1_000_300);
    expect(fired).toEqual([
      ['a', 1_000_100],
      ['b', 1_000_300],
      ['c', 1_000_300],
    ]);
    expect(Date.now()).toBe(1_000_300);
    clock.uninstall();
    expect(Date.now).toBe(realNow);
  });

  it('repeats an interval at its period until cleared, and a cleared timeout never fires', async () => {
    clock = installFakeClock(0);
    const ticks: number[] = [];
    const interval = setInterval(() => ticks.push(Date.now()), 250);
    const never = setTimeout(() => ticks.push(-1), 500);
    clearTimeout(never);
    await clock.advanceTo(1000);
    expect(ticks).toEqual([250, 500, 750, 1000]);
    clearInterval(interval);
    await clock.advanceTo(2000);
    expect(ticks).toEqual([250, 500, 750, 1000]);
    expect(clock.pending()).toBe(0);
  });

  it('lets a timer set by a timer fire in the same advance when it falls due within it', async () => {
    clock = installFakeClock(0);
    const fired: number[] = [];
    setTimeout(() => {
      fired.push(Date.now());
      setTimeout(() => fired.push(Date.now()), 50);
    }, 100);
    await clock.advanceTo(200);
    expect(fired).toEqual([100, 150]);
  });

  it('gives handles the parts of a Node Timeout the daemon uses', async () => {
    clock = installFakeClock(0);
    let fired = 0;
    const handle = setTimeout(() => (fired += 1), 100) as unknown as NodeJS.Timeout;
    expect(handle.unref()).toBe(handle);
    expect(handle.hasRef()).toBe(false);
    await clock.advanceTo(100);
    expect(fired).toBe(1);
  });

  it('refresh() starts a timeout\'s delay again from now, as Node\'s Timeout.refresh does', async () => {
    clock = installFakeClock(0);
    const fired: number[] = [];
    const handle = setTimeout(() => fired.push(Date.now()), 300) as unknown as NodeJS.Timeout;
    await clock.advanceTo(200);
    handle.refresh();
    await clock.advanceTo(499);
    expect(fired).toEqual([]);
    await clock.advanceTo(500);
    expect(fired).toEqual([500]);
  });
});
