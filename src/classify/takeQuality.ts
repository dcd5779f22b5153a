import { emptyLineQuality } from './lineQuality.js';
import type { LoopClassifierState } from './loopClassifierState.js';
import type { LineQuality } from './loopTypes.js';

/** Hands the line-quality counters to the shell (once a minute) and starts fresh ones. */
export function takeQuality(state: LoopClassifierState): { state: LoopClassifierState; quality: LineQuality } {
  return { state: { ...state, quality: emptyLineQuality() }, quality: { ...state.quality } };
}
