import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS } from '../../src/classify/loopClassifierState.js';
import { stepLoop } from '../../src/classify/loopClassifier.js';
import { changes, classify, edge, pulsesAt, tick, us } from './loopScript.js';

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

/** README rule 9: the flag drops at healthy since + intermittent_window; effects come out in time order (stepLoop). */
describe('intermittent: the flag dropping during a pulse', () => {
  it('drops at healthy since + window, told after the pulse in flight that started before it', () => {
    // Entries: open 300 ms, tripped 2500 ms, open 3200 ms: flagged at 3200 ms (window 5 s). Back at N at
    // 4000 ms, pulses from 4100 ms: healthy at 5101 ms, so the flag drops at 10 101 ms, the very end of
    // the pulse 10 100–10 101 ms.
    const settings = { ...DEFAULT_LOOP_SETTINGS, intermittentWindowMs: 5000 };
    const starts = Array.from({ length: 13 }, (_, i) => 4100 + 500 * i);
    const upToLast = [edge('N', 0), edge('O', 100), edge('N', 1000), edge('O', 3000), edge('N', 4000), ...pulsesAt(starts)];
    const before = classify(upToLast.slice(0, -1), settings);
    expect(changes(before.effects).at(-1)).toEqual(['healthy', us(5101)]);
    const last = stepLoop(before.state, upToLast.at(-1)!, settings);
    expect(last.effects.map((e) => [e.kind, e.atUs])).toEqual([['pulse', us(10100)], ['intermittent', us(10101)]]);
    expect(last.effects[1]).toMatchObject({ on: false });
  });
});
