import { describe, expect, it } from 'vitest';
import { createSimulator } from '../../src/sim/createSimulator.js';
import { loadScenario } from '../../src/sim/loadScenario.js';
import { runSimulator } from '../../src/sim/runSimulator.js';
import { createFakeClock } from './fakeClock.js';

const demo = loadScenario(new URL('../../config/demo.scenario.yaml', import.meta.url).pathname);

describe('runSimulator (real-time shell, fake clock)', () => {
  it('writes what the simulator generates as host time passes, scaled by speed', () => {
    const clock = createFakeClock();
    const written: string[] = [];
    const run = runSimulator(demo, { write: (l) => written.push(l), speed: 10, now: clock.now, setTimer: clock.setTimer });
    expect(written).toHaveLength(1); // HELLO at once
    clock.advance(1000); // 1 s real = 10 s simulated
    const reference = createSimulator(demo).advanceTo(20_000_000);
    // Everything written is the simulator's output in order, and nothing is more than one sleep
    // (50 ms real = 0.5 s simulated at speed 10) behind.
    expect(written).toEqual(reference.slice(0, written.length).map((l) => l.line));
    expect(written.length).toBeGreaterThanOrEqual(reference.filter((l) => l.atUs <= 9_500_000).length);
    expect(written.length).toBeLessThanOrEqual(reference.filter((l) => l.atUs <= 10_000_000).length);
    const count = written.length;
    run.stop();
    clock.advance(1000);
    expect(written).toHaveLength(count);
    expect(clock.pending).toBe(0);
  });

  it('stops by itself at untilUs, having written exactly up to it', async () => {
    const clock = createFakeClock();
    const written: string[] = [];
    const run = runSimulator(demo, { write: (l) => written.push(l), untilUs: 2_000_000, now: clock.now, setTimer: clock.setTimer });
    clock.advance(5000);
    await run.done;
    expect(written).toEqual(createSimulator(demo).advanceTo(2_000_000).map((l) => l.line));
    expect(clock.pending).toBe(0);
  });

  it('sleeps no longer than maxSleepMs between catch-ups', () => {
    const clock = createFakeClock();
    let wakeUps = 0;
    const run = runSimulator(demo, {
      write: () => {},
      now: clock.now,
      setTimer: (fn, ms) => {
        expect(ms).toBeLessThanOrEqual(50);
        expect(ms).toBeGreaterThanOrEqual(1);
        wakeUps++;
        return clock.setTimer(fn, ms);
      },
    });
    clock.advance(2000);
    expect(wakeUps).toBeGreaterThanOrEqual(40);
    run.stop();
  });
});
