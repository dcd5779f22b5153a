import type { Band } from '../model/band.js';
import { acceptPulse } from './acceptPulse.js';
import { acceptSignOfLife } from './acceptSignOfLife.js';
import { clearIntermittentBy, enterState } from './loopRun.js';
import type { LoopRun } from './loopRun.js';
import { stateReason } from './stateReason.js';
import { tripDeadlineUs } from './tripDeadline.js';

/**
 * The H span that began at `bandSinceUs` is over at `endUs`, the line now at `next` (or, from
 * endMissedSpan, back at N at some unseen moment before it). `viaEdge` says an EDGE showed the end at
 * that instant. Books the heartbeat, glitch or long pulse it was, a sign of life if lost frames hid too
 * much to tell, and a trip whose window ran out during it.
 */
export function endHighSpan(run: LoopRun, endUs: number, next: Band, viaEdge: boolean): void {
  const { s, w } = run;
  const startUs = s.bandSinceUs ?? endUs;
  // The span already proved to be a short (advanceLoop fired it); nothing more to book.
  if (s.state === 'shorted' && s.sinceUs !== null && s.sinceUs >= startUs) return;

  const widthUs = endUs - startUs;
  // Both ends seen by EDGE, no frames lost, and the band before it known: the span is judged as it is.
  const wholeSpanSeen = viaEdge && s.spanTimed && s.spanFrom !== null;
  const isHeartbeat =
    wholeSpanSeen && s.highMayBePulse && next === 'N' && widthUs >= w.pulseMinUs && widthUs <= w.pulseMaxUs;
  if (isHeartbeat) {
    clearIntermittentBy(run, endUs);
    acceptPulse(run, startUs, endUs);
    return;
  }
  if (wholeSpanSeen) {
    // Not a heartbeat. Spans too short for a long pulse count as glitches, including heartbeat-width
    // spans that did not start and end in N (noise riding an open or shorted line).
    if (widthUs > w.pulseMaxUs) s.quality.longPulses += 1;
    else s.quality.glitches += 1;
  } else if (next === 'N') {
    judgeHiddenHigh(run, startUs, endUs, viaEdge);
  }
  // A trip window that ran out during the span stands, dated when it ran out: invalid pulses do not
  // keep a loop alive. A deadline at the span's very end is left to advanceLoop, which fires it once
  // time is past it.
  const deadlineUs = s.state !== 'tripped' ? tripDeadlineUs(run) : null;
  if (deadlineUs !== null) {
    const tripAtUs = Math.max(deadlineUs, startUs);
    if (tripAtUs < endUs) {
      clearIntermittentBy(run, tripAtUs);
      enterState(run, 'tripped', tripAtUs, stateReason.tripped(w.tripUs));
      return;
    }
  }
  clearIntermittentBy(run, endUs);
}

/**
 * An H span back at N that lost frames hid part of, so it cannot be judged as a heartbeat. Two things
 * may still show the node alive:
 * - An EDGE into N after lost frames: the span may have ended unseen and a later pulse (its H EDGE
 *   lost) ended here — or a fault came and went, and a loop back from a fault gets a full trip window
 *   anyway. Either way the window restarts, from the latest start a valid pulse ending here could have
 *   had (as in endMissedSpan).
 * - A start seen as an EDGE out of N (or out of a band we missed, not O), with the width known only
 *   within bounds — at least until H was last seen, at most until N was seen again: unless the bounds
 *   rule out a valid pulse, the node pulled the line at `startUs`. The upper bound is not held against
 *   it: with the TICKs in between lost it is loose, and the span might be a short that came and went
 *   unseen; but the window it restarts runs from a time really seen.
 * Neither is a valid pulse (no count towards return to normal, no interval). A node that has really
 * stopped makes no EDGEs at all, so neither can keep it from tripping.
 */
function judgeHiddenHigh(run: LoopRun, startUs: number, endUs: number, viaEdge: boolean): void {
  const { s, w } = run;
  // Since H was last seen (s.nowUs) the line may have gone to N and pulsed again.
  if (viaEdge && !s.spanTimed) acceptSignOfLife(run, s.nowUs ?? startUs, endUs - w.pulseMinUs);
  if (!s.spanStartKnown || s.spanFrom === 'O') return;
  const atMostUs = endUs - startUs;
  const atLeastUs = (viaEdge && s.spanTimed ? endUs : (s.nowUs ?? startUs)) - startUs;
  if (atLeastUs > w.pulseMaxUs || atMostUs < w.pulseMinUs) return;
  acceptSignOfLife(run, startUs, startUs);
}
