import { isBand } from '../model/band.js';
import { advanceLoop } from './advanceLoop.js';
import { endBand } from './endBand.js';
import type { LoopClassifierState } from './loopClassifierState.js';
import { breakRhythm, enterState, startRun } from './loopRun.js';
import type { LoopRun } from './loopRun.js';
import type { LoopSettings } from './loopSettings.js';
import type { LoopEffect, LoopInput } from './loopTypes.js';
import { loopWindows } from './loopWindows.js';
import { stateReason } from './stateReason.js';

/**
 * The per-loop classifier: one input in, the next state and what happened out. Pure: decoder time
 * comes in with the input, nothing is read from a clock, the given state is never modified. Effects
 * come out in time order; within one input they may date from before its own time, because a window
 * that expired earlier is dated when it expired.
 */
export function stepLoop(
  state: LoopClassifierState,
  input: LoopInput,
  settings: LoopSettings,
): { state: LoopClassifierState; effects: LoopEffect[] } {
  const run = startRun(state, loopWindows(settings));
  applyInput(run, input);
  // Array.prototype.sort is stable, so effects dated alike keep the order they happened in.
  if (run.effects.length > 1) run.effects.sort((a, b) => a.atUs - b.atUs);
  return { state: run.s, effects: run.effects };
}

function applyInput(run: LoopRun, input: LoopInput): void {
  const s = run.s;
  switch (input.kind) {
    case 'restart':
      startOver(run, s.lastHeardUs ?? 0, stateReason.restarted());
      return;
    case 'offline':
      s.awaitingSpeech = true;
      enterState(run, 'offline', s.lastHeardUs ?? 0, stateReason.offline());
      return;
    case 'lost': {
      const count = Number.isFinite(input.count) ? Math.max(0, Math.floor(input.count)) : 0;
      if (count === 0) return;
      s.quality.lostFrames += count;
      // Whatever is measured across the gap is untrusted: intervals, and the current span's width.
      breakRhythm(run);
      s.spanTimed = false;
      s.highMayBePulse = false;
      return;
    }
    case 'band':
    case 'sync': {
      // The shell validates frames; this only keeps a malformed value from corrupting the state.
      if (!Number.isFinite(input.atUs) || !isBand(input.band)) return;
      if (s.awaitingSpeech) startOver(run, input.atUs, stateReason.heardAgain());
      // Decoder time never runs backwards within a session; a late value is taken as "now".
      const atUs = s.nowUs === null ? input.atUs : Math.max(input.atUs, s.nowUs);
      s.lastHeardUs = atUs;
      if (s.tripFromUs === null) s.tripFromUs = atUs;
      if (input.band !== s.band) {
        const viaEdge = input.kind === 'band';
        // An EDGE vouches that the old band held until now; a TICK after lost frames does not.
        if (viaEdge) advanceLoop(run, atUs);
        endBand(run, atUs, input.band, viaEdge);
      }
      s.nowUs = atUs;
      advanceLoop(run, atUs);
      return;
    }
    default: {
      const unexpected: never = input;
      void unexpected;
    }
  }
}

/** Back to unknown with the loop's timing history forgotten; quality counters and the intermittent flag survive. */
function startOver(run: LoopRun, atUs: number, reason: string): void {
  const s = run.s;
  s.nowUs = null;
  s.band = null;
  s.bandSinceUs = null;
  s.highMayBePulse = false;
  s.spanTimed = false;
  s.tripFromUs = null;
  s.lastPulseUs = null;
  s.faultEntriesUs = [];
  s.awaitingSpeech = false;
  breakRhythm(run);
  enterState(run, 'unknown', atUs, reason);
}
