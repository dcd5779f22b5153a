import { acceptSignOfLife } from './acceptSignOfLife.js';
import { beginSpan } from './beginSpan.js';
import { endHighSpan } from './endHighSpan.js';
import { breakRhythm } from './loopRun.js';
import type { LoopRun } from './loopRun.js';

/**
 * A frame after lost frames shows the band already tracked, though the band may not have held: an EDGE
 * into it says an EDGE out of it was lost; a TICK at H says nothing for sure, but if H had been seen
 * only for a heartbeat's width the span may have been a pulse that ended unseen, and this H another
 * one. Then the old span ends unseen and a new one starts at `atUs` (exactly, if `viaEdge`; the band
 * before it unknown), and the pulse chain breaks; otherwise (N or O on a TICK, or H held longer) the
 * span goes on as it was.
 */
export function endMissedSpan(run: LoopRun, atUs: number, viaEdge: boolean): void {
  const { s, w } = run;
  const band = s.band;
  if (band === null || s.bandSinceUs === null) return;
  const mayHaveBeenPulse = band === 'H' && s.nowUs !== null && s.nowUs - s.bandSinceUs <= w.pulseMaxUs;
  if (!viaEdge && !mayHaveBeenPulse) return;
  if (band === 'H') {
    // The line must have left H and come back (through N, unless something odd happened).
    endHighSpan(run, atUs, 'N', false);
  } else if (band === 'N' && s.nowUs !== null) {
    // The line left N after it was last seen there and is back by `atUs`. Either the node pulled it (a
    // pulse whose width is unknown) or a fault came and went unseen, and a loop back from a fault gets a
    // full trip window anyway (see endBand): either way the window restarts, from the latest start a
    // valid pulse ending at `atUs` could have had. Too short to hold a valid pulse: a glitch, nothing more.
    acceptSignOfLife(run, s.nowUs, atUs - w.pulseMinUs);
  }
  beginSpan(run, atUs, band, null, viaEdge);
  breakRhythm(run);
}
