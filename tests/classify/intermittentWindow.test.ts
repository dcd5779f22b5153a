import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS } from '../../src/classify/loopSettings.js';
import { changes, classify, edge, tick, us } from './loopScript.js';

/**
 * README: "A loop that enters a fault state 3 times within 10 minutes is flagged intermittent". The
 * window includes its first instant: an entry exactly one window before the third still counts.
 */
describe('intermittent: the window boundary', () => {
  // Fault entries: open at 300 ms (O from 100 ms, held 200 ms), tripped at 2500 ms (N from 1000 ms, no
  // pulse for 1500 ms), open again at 3200 ms (O from 3000 ms). First to third: exactly 2900 ms.
  const script = [edge('N', 0), edge('O', 100), edge('N', 1000), edge('O', 3000), tick('O', 3300)];

  it('three entries with the first exactly one window before the third flag the loop', () => {
    const { effects } = classify(script, { ...DEFAULT_LOOP_SETTINGS, intermittentWindowMs: 2900 });
    expect(changes(effects)).toEqual([
      ['open', us(300)],
      ['tripped', us(2500)],
      ['open', us(3200)],
    ]);
    expect(effects.filter((e) => e.kind === 'intermittent')).toEqual([{ kind: 'intermittent', on: true, atUs: us(3200), faultsInWindow: 3 }]);
  });

  it('one microsecond less of window and the first entry has fallen out', () => {
    const { effects } = classify(script, { ...DEFAULT_LOOP_SETTINGS, intermittentWindowMs: 2899.999 });
    expect(changes(effects).map(([to]) => to)).toEqual(['open', 'tripped', 'open']);
    expect(effects.filter((e) => e.kind === 'intermittent')).toEqual([]);
  });
});
