import type { Band } from '../model/band.js';
import { beginSpan } from './beginSpan.js';
import { endHighSpan } from './endHighSpan.js';
import { breakRhythm } from './loopRun.js';
import type { LoopRun } from './loopRun.js';

/**
 * The band changes to `next` at `atUs`. `viaEdge` says an EDGE reported the change at that instant;
 * otherwise a TICK revealed it after lost frames, so the old band ended at some unknown time and
 * nothing about that span's width may be inferred beyond the bounds the frames give.
 */
export function endBand(run: LoopRun, atUs: number, next: Band, viaEdge: boolean): void {
  const s = run.s;
  const previous = s.band;
  if (previous === 'H') endHighSpan(run, atUs, next, viaEdge);
  // A node that has just got its loop back (cable repaired, short cleared) gets a full trip window to
  // start pulsing, so a repair is not reported as a trip.
  if ((s.state === 'open' && previous === 'O') || (s.state === 'shorted' && previous === 'H')) s.tripFromUs = atUs;
  beginSpan(run, atUs, next, viaEdge ? previous : null, viaEdge);
  if (!viaEdge) breakRhythm(run);
}
