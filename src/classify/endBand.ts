import type { Band } from '../model/band.js';
import { acceptPulse } from './acceptPulse.js';
import { breakRhythm, clearIntermittentBy, enterState } from './loopRun.js';
import type { LoopRun } from './loopRun.js';
import { stateReason } from './stateReason.js';

/**
 * The band changes to `next` at `atUs`. `viaEdge` says an EDGE reported the change at that instant;
 * otherwise a TICK revealed it after lost frames, so the old band ended at some unknown time and
 * nothing about that span (pulse, glitch, width) may be inferred.
 */
export function endBand(run: LoopRun, atUs: number, next: Band, viaEdge: boolean): void {
  const s = run.s;
  const previous = s.band;
  if (previous === 'H') endHighSpan(run, atUs, next, viaEdge);
  // A node that has just got its loop back (cable repaired, short cleared) gets a full trip window to
  // start pulsing, so a repair is not reported as a trip.
  if ((s.state === 'open' && previous === 'O') || (s.state === 'shorted' && previous === 'H')) s.tripFromUs = atUs;
  s.band = next;
  s.bandSinceUs = atUs;
  s.spanTimed = viaEdge;
  s.highMayBePulse = viaEdge && next === 'H' && previous === 'N';
  if (!viaEdge) breakRhythm(run);
}

function endHighSpan(run: LoopRun, endUs: number, next: Band, viaEdge: boolean): void {
  const { s, w } = run;
  const startUs = s.bandSinceUs ?? endUs;
  // The span already proved to be a short (advanceLoop fired it); nothing more to book.
  if (s.state === 'shorted' && s.sinceUs !== null && s.sinceUs >= startUs) return;

  const widthUs = endUs - startUs;
  const timed = viaEdge && s.spanTimed;
  const isHeartbeat =
    timed && s.highMayBePulse && next === 'N' && widthUs >= w.pulseMinUs && widthUs <= w.pulseMaxUs;
  if (isHeartbeat) {
    clearIntermittentBy(run, endUs);
    acceptPulse(run, startUs, endUs);
    return;
  }
  // Not a heartbeat. Spans too short for a long pulse count as glitches, including heartbeat-width
  // spans that did not start and end in N (noise riding an open or shorted line).
  if (timed) {
    if (widthUs > w.pulseMaxUs) s.quality.longPulses += 1;
    else s.quality.glitches += 1;
  }
  // A trip window that ran out during the span stands, dated when it ran out: invalid pulses do not
  // keep a loop alive.
  if (s.state !== 'tripped' && s.tripFromUs !== null) {
    const tripAtUs = Math.max(s.tripFromUs + w.tripUs, startUs);
    if (tripAtUs <= endUs) {
      clearIntermittentBy(run, tripAtUs);
      enterState(run, 'tripped', tripAtUs, stateReason.tripped(w.tripUs));
      return;
    }
  }
  clearIntermittentBy(run, endUs);
}
