import { isFaultState } from '../model/loopState.js';
import type { LoopState } from '../model/loopState.js';
import { copyLoopState, type LoopClassifierState } from './loopClassifierState.js';
import type { LoopEffect } from './loopTypes.js';
import type { LoopWindows } from './loopWindows.js';

/**
 * One step's working set: a private copy of the state that the step's helpers update in place, the
 * loop's windows, and the effects gathered so far. The copy is what keeps stepLoop pure to its callers.
 */
export interface LoopRun {
  s: LoopClassifierState;
  w: LoopWindows;
  effects: LoopEffect[];
}

export function startRun(state: LoopClassifierState, w: LoopWindows): LoopRun {
  // faultEntriesUs is replaced, never mutated, so sharing it with the caller's state is safe.
  return { s: copyLoopState(state), w, effects: [] };
}

/** Forget interval history: the next pulse starts a new chain and reports no interval. */
export function breakRhythm(run: LoopRun): void {
  run.s.previousPulseUs = null;
  run.s.pulsesInRhythm = 0;
}

export function enterState(run: LoopRun, to: LoopState, atUs: number, reason: string): void {
  const s = run.s;
  if (s.state === to) return;
  run.effects.push({ kind: 'state', from: s.state, to, atUs, reason });
  s.state = to;
  s.sinceUs = atUs;
  if (!isFaultState(to)) return;
  // Return to normal must be earned with fresh pulses, never with a chain begun before the fault.
  breakRhythm(run);
  const windowStart = atUs - run.w.intermittentWindowUs;
  s.faultEntriesUs = [...s.faultEntriesUs.filter((t) => t >= windowStart), atUs];
  if (!s.intermittent && s.faultEntriesUs.length >= run.w.intermittentCount) {
    s.intermittent = true;
    run.effects.push({ kind: 'intermittent', on: true, atUs, faultsInWindow: s.faultEntriesUs.length });
  }
}

/** When the intermittent flag may drop: a whole window spent healthy (no fault entry can fall inside it). */
export function intermittentClearsAtUs(run: LoopRun): number | null {
  const s = run.s;
  if (!s.intermittent || s.state !== 'healthy' || s.sinceUs === null) return null;
  return s.sinceUs + run.w.intermittentWindowUs;
}

/** Drop the intermittent flag if its time has come by `limitUs`. */
export function clearIntermittentBy(run: LoopRun, limitUs: number): void {
  const clearsAt = intermittentClearsAtUs(run);
  if (clearsAt === null || clearsAt > limitUs) return;
  const s = run.s;
  s.intermittent = false;
  const windowStart = clearsAt - run.w.intermittentWindowUs;
  s.faultEntriesUs = s.faultEntriesUs.filter((t) => t >= windowStart);
  run.effects.push({ kind: 'intermittent', on: false, atUs: clearsAt, faultsInWindow: s.faultEntriesUs.length });
}
