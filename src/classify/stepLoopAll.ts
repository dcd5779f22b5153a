import type { LoopClassifierState } from './loopClassifierState.js';
import type { LoopSettings } from './loopSettings.js';
import type { LoopEffect, LoopInput } from './loopTypes.js';
import { stepLoop } from './stepLoop.js';

/** Feeds a batch of inputs in order (replay, tests, benchmarks); the same as stepping them one by one. */
export function stepLoopAll(
  state: LoopClassifierState,
  inputs: readonly LoopInput[],
  settings: LoopSettings,
): { state: LoopClassifierState; effects: LoopEffect[] } {
  let current = state;
  const effects: LoopEffect[] = [];
  for (const input of inputs) {
    const step = stepLoop(current, input, settings);
    current = step.state;
    for (const effect of step.effects) effects.push(effect);
  }
  return { state: current, effects };
}
