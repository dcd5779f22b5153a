import type { Band } from '../../src/model/band.js';
import type { LoopState } from '../../src/model/loopState.js';
import { DEFAULT_LOOP_SETTINGS, initialLoopClassifier, type LoopClassifierState, type LoopSettings } from '../../src/classify/loopClassifierState.js';
import { stepLoopAll, type LoopEffect, type LoopInput } from '../../src/classify/loopClassifier.js';

/**
 * Test scripts for one loop, written in decoder milliseconds and turned into classifier inputs in
 * whole decoder µs, the way the decoder timestamps them. Invented scenarios, not recorded data.
 */

export const us = (ms: number): number => Math.round(ms * 1000);

export const edge = (band: Band, atMs: number): LoopInput => ({ kind: 'band', band, atUs: us(atMs) });
export const tick = (band: Band, atMs: number): LoopInput => ({ kind: 'sync', band, atUs: us(atMs) });
export const lost = (count: number, atMs: number): LoopInput => ({ kind: 'lost', count, atUs: us(atMs) });

/** One H span out of N and back: a heartbeat when its width is in range. */
export function pulseAt(startMs: number, widthMs = 1): LoopInput[] {
  return [edge('H', startMs), edge('N', startMs + widthMs)];
}

/** Pulses starting at each of the given times. */
export function pulsesAt(startsMs: readonly number[], widthMs = 1): LoopInput[] {
  return startsMs.flatMap((t) => pulseAt(t, widthMs));
}

/** `count` pulses every `periodMs` from `firstMs`. */
export function heartbeat(firstMs: number, count: number, periodMs = 500, widthMs = 1): LoopInput[] {
  return pulsesAt(Array.from({ length: count }, (_, i) => firstMs + i * periodMs), widthMs);
}

/** An input's decoder time; restart and offline carry none and sort first. */
export const timeOf = (input: LoopInput): number => ('atUs' in input ? input.atUs : 0);

/**
 * Adds the TICK frames a decoder would interleave: one every `everyMs` up to `untilMs`, each carrying
 * the band the edges (or an explicit TICK) so far put the loop in (an edge and a tick at the same instant: edge first).
 * Ticks before the first edge are left out, as the loop's band is not known yet.
 */
export function withTicks(inputs: readonly LoopInput[], untilMs: number, everyMs = 250): LoopInput[] {
  const out: LoopInput[] = [];
  let band: Band | null = null;
  let i = 0;
  for (let tMs = 0; tMs <= untilMs; tMs += everyMs) {
    const tUs = us(tMs);
    while (i < inputs.length && timeOf(inputs[i]!) <= tUs) {
      const input = inputs[i++]!;
      if (input.kind === 'band' || input.kind === 'sync') band = input.band;
      out.push(input);
    }
    if (band !== null) out.push(tick(band, tMs));
  }
  while (i < inputs.length) out.push(inputs[i++]!);
  return out;
}

export function classify(
  inputs: readonly LoopInput[],
  settings: LoopSettings = DEFAULT_LOOP_SETTINGS,
  from: LoopClassifierState = initialLoopClassifier(),
): { state: LoopClassifierState; effects: LoopEffect[] } {
  return stepLoopAll(from, inputs, settings);
}

/** State changes as [to, decoder µs]. */
export function changes(effects: readonly LoopEffect[]): Array<[LoopState, number]> {
  return effects.flatMap((e) => (e.kind === 'state' ? [[e.to, e.atUs] as [LoopState, number]] : []));
}

export function pulseEffects(effects: readonly LoopEffect[]) {
  return effects.flatMap((e) => (e.kind === 'pulse' ? [e] : []));
}

/** A small deterministic PRNG (mulberry32), so "random" jitter is the same on every run. */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
