import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { createPasswordCheckGate } from '../../../src/web/auth/passwordCheckGate.js';

/** Checks that finish only when the test says so, so concurrency is seen exactly, not timed. */
function heldChecks() {
  const open: Array<() => void> = [];
  let running = 0;
  let peak = 0;
  const check = () =>
    new Promise<boolean>((resolve) => {
      running += 1;
      peak = Math.max(peak, running);
      open.push(() => {
        running -= 1;
        resolve(false);
      });
    });
  return { check, open, peak: () => peak };
}

const settle = () => new Promise((r) => setImmediate(r));

describe('password check gate (bounds concurrent scrypt, issue 9)', () => {
  it('for any limits and load: never more running than allowed, the rest wait or are turned away, every accepted check runs', async () => {
    await fc.assert(
      fc.asyncProperty(fc.integer({ min: 1, max: 4 }), fc.integer({ min: 0, max: 6 }), fc.integer({ min: 0, max: 30 }), async (running, waiting, load) => {
        const gate = createPasswordCheckGate({ running, waiting });
        const held = heldChecks();
        const accepted: Array<Promise<boolean>> = [];
        let refused = 0;
        for (let i = 0; i < load; i++) {
          const result = gate.run(held.check);
          if (result) accepted.push(result);
          else refused += 1;
        }
        expect(accepted.length).toBe(Math.min(load, running + waiting));
        expect(refused).toBe(load - accepted.length);
        // Release one at a time; the line moves up but never past the limit.
        let done = 0;
        while (done < accepted.length) {
          await settle();
          expect(gate.active).toBeLessThanOrEqual(running);
          const next = held.open.shift();
          expect(next, 'an accepted check was never started').toBeDefined();
          next!();
          done += 1;
        }
        await Promise.all(accepted);
        expect(held.peak()).toBeLessThanOrEqual(running);
        expect(gate.active).toBe(0);
        expect(gate.queued).toBe(0);
      }),
      { numRuns: 60 },
    );
  });

  it('a failing check frees its slot', async () => {
    const gate = createPasswordCheckGate({ running: 1, waiting: 0 });
    await expect(gate.run(() => Promise.reject(new Error('bad hash')))).rejects.toThrow('bad hash');
    expect(gate.active).toBe(0);
    expect(await gate.run(async () => true)).toBe(true);
  });
});
