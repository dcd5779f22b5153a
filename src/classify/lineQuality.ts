import type { LineQuality } from './loopTypes.js';

export function emptyLineQuality(): LineQuality {
  return {
    pulses: 0,
    intervalCount: 0,
    intervalSumMs: 0,
    intervalSqSumMs: 0,
    outOfTolerance: 0,
    glitches: 0,
    longPulses: 0,
    lostFrames: 0,
  };
}

/** Mean and standard deviation (jitter) of the intervals the counters cover; null without intervals. */
export function intervalFigures(quality: LineQuality): { meanMs: number | null; jitterMs: number | null } {
  if (quality.intervalCount === 0) return { meanMs: null, jitterMs: null };
  const meanMs = quality.intervalSumMs / quality.intervalCount;
  // Population variance from the running sums; clamp tiny negative results of float cancellation.
  const variance = Math.max(0, quality.intervalSqSumMs / quality.intervalCount - meanMs * meanMs);
  return { meanMs, jitterMs: Math.sqrt(variance) };
}
