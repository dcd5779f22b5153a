import type { LoopRun } from './loopRun.js';
import { tripDeadlineUs } from './tripDeadline.js';

/**
 * The node was seen pulling the line — some EDGE of it came through — but lost frames hid part of the
 * pulse, so it could not be checked as a valid heartbeat. A pulse it stands for started somewhere in
 * [`earliestUs`, `latestUs`]. That proves the node alive, so the trip window restarts from `latestUs`;
 * unless the window had already run out before `earliestUs`, in which case the trip stands (the caller
 * fires it, dated at the deadline). It is no valid pulse: it neither counts towards return to normal
 * nor gives an interval, and `lastPulseUs` stays with the last valid one.
 */
export function acceptSignOfLife(run: LoopRun, earliestUs: number, latestUs: number): void {
  const s = run.s;
  if (latestUs < earliestUs) return;
  const deadlineUs = s.state === 'tripped' ? null : tripDeadlineUs(run);
  if (deadlineUs !== null && deadlineUs < earliestUs) return;
  s.tripFromUs = s.tripFromUs === null ? latestUs : Math.max(s.tripFromUs, latestUs);
}
