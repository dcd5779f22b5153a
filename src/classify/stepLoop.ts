import { isBand } from '../model/band.js';
import { advanceLoop } from './advanceLoop.js';
import { endBand } from './endBand.js';
import { endMissedSpan } from './endMissedSpan.js';
import type { LoopClassifierState } from './loopClassifierState.js';
import { breakRhythm, enterState, startRun } from './loopRun.js';
import type { LoopRun } from './loopRun.js';
import type { LoopSettings } from './loopSettings.js';
import type { LoopEffect, LoopInput } from './loopTypes.js';
import { loopWindows, type LoopWindows } from './loopWindows.js';
import { noteHiddenPulse } from './noteHiddenPulse.js';
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
  const run = startRun(state, windowsOf(settings));
  applyInput(run, input);
  // Array.prototype.sort is stable, so effects dated alike keep the order they happened in.
  if (run.effects.length > 1) run.effects.sort((a, b) => a.atUs - b.atUs);
  return { state: run.s, effects: run.effects };
}

/**
 * The windows of one settings object, worked out on its first step and kept: a TICK steps every loop,
 * and converting the settings anew each time was an allocation per loop per frame. Settings are
 * treated as immutable (they come from the config once), so the cache key is the object itself.
 */
const windowsCache = new WeakMap<LoopSettings, LoopWindows>();

function windowsOf(settings: LoopSettings): LoopWindows {
  let w = windowsCache.get(settings);
  if (w === undefined) {
    w = loopWindows(settings);
    windowsCache.set(settings, w);
  }
  return w;
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
      s.spanTimed = false;
      s.highMayBePulse = false;
      s.lostSinceSeen = true;
      // The count is the decoder's: the frames may as well have been other loops'. One frame cannot hide
      // a whole pulse of this loop while it sits at N, and if it was one of this loop's EDGEs the next
      // frame for the loop shows it (an EDGE into the band tracked, or a TICK with another band), which
      // breaks the chain then. Two frames can hide a whole pulse: the interval across them is untrusted,
      // and the trip window gets the benefit of the doubt.
      const mayHidePulse = count >= 2 && s.band === 'N';
      if (mayHidePulse || s.band !== 'N') breakRhythm(run);
      if (mayHidePulse && s.nowUs !== null) noteHiddenPulse(run, s.nowUs, Math.max(s.nowUs, input.atUs) - run.w.pulseMinUs);
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
        // An EDGE vouches that the old band held until now; a TICK after lost frames does not, and nor
        // does an EDGE out of H or O after lost frames: the EDGE that ended that span may have been among
        // them, so a short or open must not be dated inside a span nobody saw. (At N, lost frames can hide
        // only whole pulses, which the trip deadline already allows for.)
        if (viaEdge && (s.band === 'N' || !s.lostSinceSeen)) advanceLoop(run, atUs);
        endBand(run, atUs, input.band, viaEdge);
      } else if (s.lostSinceSeen) {
        // The same band after a gap need not mean it held (see endMissedSpan). Without a gap it did, and
        // an EDGE into the band tracked is the decoder contradicting itself: it then changes nothing.
        endMissedSpan(run, atUs, input.kind === 'band');
      }
      s.lostSinceSeen = false;
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
  s.spanStartKnown = false;
  s.spanFrom = null;
  s.tripFromUs = null;
  s.hiddenPulseUs = null;
  s.lostSinceSeen = false;
  s.lastPulseUs = null;
  s.faultEntriesUs = [];
  s.awaitingSpeech = false;
  breakRhythm(run);
  enterState(run, 'unknown', atUs, reason);
}
