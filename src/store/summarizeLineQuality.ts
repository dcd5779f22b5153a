import type { LineQuality } from '../classify/index.js';

export interface LineQualitySummary extends LineQuality {
  /** Mean pulse interval, ms; null without intervals. */
  intervalMeanMs: number | null;
  /** Population standard deviation of the pulse interval, ms; null without intervals. */
  intervalJitterMs: number | null;
}

/**
 * Adds up buckets (minute or hour, any mix) and derives mean and jitter from the sums. Sums and sums of
 * squares add across buckets, which is why folding minutes into hours keeps both figures computable.
 */
export function summarizeLineQuality(buckets: readonly LineQuality[]): LineQualitySummary {
  const total: LineQuality = {
    pulses: 0, intervalCount: 0, intervalSumMs: 0, intervalSqSumMs: 0,
    outOfTolerance: 0, glitches: 0, longPulses: 0, lostFrames: 0,
  };
  for (const b of buckets) {
    total.pulses += b.pulses;
    total.intervalCount += b.intervalCount;
    total.intervalSumMs += b.intervalSumMs;
    total.intervalSqSumMs += b.intervalSqSumMs;
    total.outOfTolerance += b.outOfTolerance;
    total.glitches += b.glitches;
    total.longPulses += b.longPulses;
    total.lostFrames += b.lostFrames;
  }
  if (total.intervalCount === 0) return { ...total, intervalMeanMs: null, intervalJitterMs: null };
  const mean = total.intervalSumMs / total.intervalCount;
  // Rounding can push E[x²] − E[x]² a hair below zero when every interval is equal.
  const variance = Math.max(0, total.intervalSqSumMs / total.intervalCount - mean * mean);
  return { ...total, intervalMeanMs: mean, intervalJitterMs: Math.sqrt(variance) };
}
