import type { LoopClassifierState } from './loopClassifierState.js';

/**
 * Line quality: the counters one loop's classifier keeps between the shell's per-minute takes, and the
 * figures (mean interval, jitter) worked out from them.
 *
 * Intervals are measured pulse start to pulse start between valid pulses; an interval across frames
 * lost that could have hidden a pulse (two or more lost while the loop sat at N, or any while it was
 * away from N), an EDGE missed on this loop, a decoder restart or a fault state is not measured at all.
 * Every measured interval feeds the sums (mean and jitter, see intervalFigures); `outOfTolerance`
 * counts those outside the ratios.
 */
export interface LineQuality {
  /** Valid heartbeat pulses. */
  pulses: number;
  intervalCount: number;
  intervalSumMs: number;
  intervalSqSumMs: number;
  outOfTolerance: number;
  glitches: number;
  longPulses: number;
  lostFrames: number;
}

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

/**
 * A private copy of the counters for one step to change. Field by field rather than spread: V8 builds the
 * literal with one fixed shape, where a spread went through its slow cloning path (once per pulse).
 */
export function copyLineQuality(q: LineQuality): LineQuality {
  return {
    pulses: q.pulses,
    intervalCount: q.intervalCount,
    intervalSumMs: q.intervalSumMs,
    intervalSqSumMs: q.intervalSqSumMs,
    outOfTolerance: q.outOfTolerance,
    glitches: q.glitches,
    longPulses: q.longPulses,
    lostFrames: q.lostFrames,
  };
}

/** Hands the line-quality counters to the shell (once a minute) and starts fresh ones. */
export function takeQuality(state: LoopClassifierState): { state: LoopClassifierState; quality: LineQuality } {
  return { state: { ...state, quality: emptyLineQuality() }, quality: { ...state.quality } };
}

/** Mean and standard deviation (jitter) of the intervals the counters cover; null without intervals. */
export function intervalFigures(quality: LineQuality): { meanMs: number | null; jitterMs: number | null } {
  if (quality.intervalCount === 0) return { meanMs: null, jitterMs: null };
  const meanMs = quality.intervalSumMs / quality.intervalCount;
  // Population variance from the running sums; clamp tiny negative results of float cancellation.
  const variance = Math.max(0, quality.intervalSqSumMs / quality.intervalCount - meanMs * meanMs);
  return { meanMs, jitterMs: Math.sqrt(variance) };
}
