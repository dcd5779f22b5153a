import type { LoopRun } from './loopRun.js';
import { tripDeadlineUs } from './tripDeadline.js';

/**
 * Lost frames may have hidden a valid pulse that started at some time in [`fromUs`, `toUs`] (both its
 * EDGEs lost, or one EDGE lost and the other not telling enough). Nothing proves it, so the loop gets
 * only the benefit of the doubt: the trip window may run from the latest start such a pulse could have
 * had and still have kept the loop alive — never past the current deadline (a pulse after it would not
 * have stopped the trip) and never more than half a period past what was really seen (tripDeadlineUs caps it).
 */
export function noteHiddenPulse(run: LoopRun, fromUs: number, toUs: number): void {
  const s = run.s;
  if (s.state === 'tripped') return;
  const deadlineUs = tripDeadlineUs(run);
  if (deadlineUs === null) return;
  const latestStartUs = Math.min(toUs, deadlineUs);
  // Only pulses after the deadline fit (the trip is certain), or no room at all.
  if (latestStartUs < fromUs) return;
  s.hiddenPulseUs = s.hiddenPulseUs === null ? latestStartUs : Math.max(s.hiddenPulseUs, latestStartUs);
}
