import { enterState } from './loopRun.js';
import type { LoopRun } from './loopRun.js';
import { stateReason } from './stateReason.js';

/**
 * Books one valid heartbeat pulse that started at `startUs` and ended at `endUs`. Intervals run pulse
 * start to pulse start. Every trusted interval feeds the mean and jitter; those outside tolerance are
 * also counted, and restart the return-to-normal count rather than leaving healthy (the trip window
 * alone decides that, so one lost pulse never drops a healthy loop).
 */
export function acceptPulse(run: LoopRun, startUs: number, endUs: number): void {
  const { s, w } = run;
  const q = s.quality;
  const intervalUs = s.previousPulseUs === null ? null : startUs - s.previousPulseUs;
  q.pulses += 1;
  let inRhythm = false;
  if (intervalUs !== null) {
    const intervalMs = intervalUs / 1000;
    q.intervalCount += 1;
    q.intervalSumMs += intervalMs;
    q.intervalSqSumMs += intervalMs * intervalMs;
    inRhythm = intervalUs >= w.intervalMinUs && intervalUs <= w.intervalMaxUs;
    if (!inRhythm) q.outOfTolerance += 1;
  }
  s.pulsesInRhythm = inRhythm ? s.pulsesInRhythm + 1 : 1;
  s.previousPulseUs = startUs;
  s.lastPulseUs = startUs;
  s.tripFromUs = s.tripFromUs === null ? startUs : Math.max(s.tripFromUs, startUs);
  run.effects.push({ kind: 'pulse', atUs: startUs, widthUs: endUs - startUs, intervalUs });
  if (s.state !== 'healthy' && s.pulsesInRhythm >= w.healthyPulses) {
    enterState(run, 'healthy', endUs, stateReason.healthy(s.pulsesInRhythm));
  }
}
