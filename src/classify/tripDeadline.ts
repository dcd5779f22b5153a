import type { LoopRun } from './loopRun.js';

/**
 * The instant the loop's trip window runs out: `tripUs` after the trip window's start, moved on by a
 * pulse that lost frames may have hidden, but by at most `hiddenPulseGraceUs` (half a period) — so
 * however many frames are lost, a node that really stopped is tripped at most half a period later than
 * on a clean line (dated so; it is known once the next frame for the loop arrives). Null before the
 * first input.
 *
 * The boundary is deliberate: the node has the whole window, its last instant included. A valid pulse
 * that starts exactly at the deadline keeps the loop alive (3 periods after the last pulse is the very
 * moment the third-next pulse is due), so a trip is only confirmed once decoder time is known to be past
 * the deadline — and it is still dated at the deadline, when the window ran out.
 */
export function tripDeadlineUs(run: LoopRun): number | null {
  const { s, w } = run;
  if (s.tripFromUs === null) return null;
  const hiddenExtraUs = s.hiddenPulseUs === null ? 0 : Math.min(Math.max(0, s.hiddenPulseUs - s.tripFromUs), w.hiddenPulseGraceUs);
  return s.tripFromUs + hiddenExtraUs + w.tripUs;
}
