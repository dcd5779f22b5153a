import { describe, expect, it } from 'vitest';
import { copyLineQuality, intervalFigures, takeQuality, type LineQuality } from '../../src/classify/lineQuality.js';
import { classify, edge, lost, pulseAt, pulsesAt } from './loopScript.js';

describe('copyLineQuality', () => {
  it('copies every counter into a new object, so changing the copy leaves the original as it was', () => {
    // Distinct values per field, so a field copied from the wrong counter shows.
    const original: LineQuality = { pulses: 1, intervalCount: 2, intervalSumMs: 3.5, intervalSqSumMs: 4.25, outOfTolerance: 5, glitches: 6, longPulses: 7, lostFrames: 8 };
    const copy = copyLineQuality(original);
    expect(copy).toEqual(original);
    expect(Object.keys(copy).sort()).toEqual(Object.keys(original).sort());
    copy.pulses += 1;
    expect(original.pulses).toBe(1);
  });
});

describe('takeQuality', () => {
  it('hands over the counters since the last take and starts again from zero', () => {
    // Intervals 400, 600, 500, 450 ms; then a glitch, a long pulse and two lost frames.
    const starts = [100, 500, 1100, 1600, 2050];
    const inputs = [edge('N', 0), ...pulsesAt(starts), ...pulseAt(2300, 0.1), ...pulseAt(2400, 50), lost(2, 2500)];
    const first = takeQuality(classify(inputs).state);
    const intervals = [400, 600, 500, 450];
    expect(first.quality).toEqual({
      pulses: 5,
      intervalCount: 4,
      intervalSumMs: intervals.reduce((a, b) => a + b, 0),
      intervalSqSumMs: intervals.reduce((a, b) => a + b * b, 0),
      outOfTolerance: 0,
      glitches: 1,
      longPulses: 1,
      lostFrames: 2,
    });
    // Mean and population standard deviation, worked by hand: mean 1950 / 4 = 487.5 ms; deviations
    // −87.5, 112.5, 12.5, −37.5 ms, squares summing to 21 875, variance 5468.75 ms², sd ≈ 73.95 ms.
    expect(intervalFigures(first.quality).meanMs).toBeCloseTo(487.5, 9);
    expect(intervalFigures(first.quality).jitterMs).toBeCloseTo(Math.sqrt(5468.75), 9);
    expect(takeQuality(first.state).quality).toEqual({
      pulses: 0, intervalCount: 0, intervalSumMs: 0, intervalSqSumMs: 0, outOfTolerance: 0, glitches: 0, longPulses: 0, lostFrames: 0,
    });
    expect(intervalFigures(takeQuality(first.state).quality)).toEqual({ meanMs: null, jitterMs: null });
  });
});
