import type { Band } from '../model/band.js';
import type { LoopState } from '../model/loopState.js';

/** Inputs to the per-loop classifier. Times are unwrapped decoder µs; the classifier never reads a clock. */
export type LoopInput =
  /** The loop entered `band` at `atUs` (an EDGE frame). */
  | { kind: 'band'; band: Band; atUs: number }
  /** A TICK: the loop's band at `atUs`; advances time and resynchronises the band after lost frames. */
  | { kind: 'sync'; band: Band; atUs: number }
  /** Frames were lost on this loop's decoder (a sequence gap or an OVERRUN fault). */
  | { kind: 'lost'; count: number; atUs: number }
  /** The decoder restarted (HELLO) or reconnected: back to `unknown`, timing history forgotten. */
  | { kind: 'restart' }
  /** The decoder went silent or its port vanished (decided by the shell on host time). */
  | { kind: 'offline' };

/**
 * Line-quality counters since the last time the shell took them (per-minute rows).
 * Intervals are measured pulse start to pulse start between valid pulses; an interval across frames
 * lost that could have hidden a pulse (two or more lost while the loop sat at N, or any while it was
 * away from N), an EDGE missed on this loop, a decoder restart or a fault state is not measured at all. Every measured interval feeds
 * the sums (mean and jitter, see intervalFigures); `outOfTolerance` counts those outside the ratios.
 */
export interface LineQuality {
  /** Valid heartbeat pulses. */
  pulses: number;
  intervalCount: number;
  intervalSumMs: number;
  intervalSqSumMs: number;
  outOfTolerance: number;
  glitches: number;
  longPulses: number;
  lostFrames: number;
}

export type LoopEffect =
  | { kind: 'state'; from: LoopState; to: LoopState; atUs: number; reason: string }
  /** A valid heartbeat pulse; `atUs` is its start, `intervalUs` null when not measured (see LineQuality). */
  | { kind: 'pulse'; atUs: number; widthUs: number; intervalUs: number | null }
  | { kind: 'intermittent'; on: boolean; atUs: number; faultsInWindow: number };
