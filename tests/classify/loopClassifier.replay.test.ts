import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS, initialLoopClassifier, type LoopClassifierState } from '../../src/classify/loopClassifierState.js';
import { stepLoop, stepLoopAll, type LoopEffect, type LoopInput } from '../../src/classify/loopClassifier.js';
import { edge, heartbeat, lost, pulseAt, tick, withTicks } from './loopScript.js';

/*
 * The classifier runs on decoder time only, so replaying the same frames faster than real time, in one
 * batch or in pieces, must give the same result (issue 2: "feeding the same frames faster than real
 * time must give the same states").
 */

// An invented day in the life of one loop: heal, cut and repair, noise, a short, a freeze, a thaw.
const edges: LoopInput[] = [
  edge('N', 0),
  ...heartbeat(100, 3),
  edge('O', 1200),
  edge('N', 3000),
  ...heartbeat(3300, 4),
  ...pulseAt(5050, 0.05),
  ...heartbeat(5300, 2),
  ...pulseAt(6120, 40),
  edge('H', 6500),
  edge('N', 7000),
  ...heartbeat(7300, 3),
  lost(1, 8400),
  ...heartbeat(8800, 2),
  ...heartbeat(13_000, 4),
];
const endMs = 16_000;

function stepOneByOne(inputs: readonly LoopInput[]): { state: LoopClassifierState; effects: LoopEffect[] } {
  let state = initialLoopClassifier();
  const effects: LoopEffect[] = [];
  for (const input of inputs) {
    const step = stepLoop(state, input, DEFAULT_LOOP_SETTINGS);
    state = step.state;
    effects.push(...step.effects);
  }
  return { state, effects };
}

describe('replay', () => {
  const inputs = withTicks(edges, endMs);

  it('gives identical effects and state in one batch, one by one, or split anywhere', () => {
    const batch = stepLoopAll(initialLoopClassifier(), inputs, DEFAULT_LOOP_SETTINGS);
    expect(stepOneByOne(inputs)).toEqual(batch);
    for (const cut of [1, 7, inputs.length >> 1, inputs.length - 2]) {
      const first = stepLoopAll(initialLoopClassifier(), inputs.slice(0, cut), DEFAULT_LOOP_SETTINGS);
      const second = stepLoopAll(first.state, inputs.slice(cut), DEFAULT_LOOP_SETTINGS);
      expect({ state: second.state, effects: [...first.effects, ...second.effects] }).toEqual(batch);
    }
    // The scenario does exercise every state.
    const reached = new Set(batch.effects.flatMap((e) => (e.kind === 'state' ? [e.to] : [])));
    expect([...reached].sort()).toEqual(['healthy', 'open', 'shorted', 'tripped']);
  });

  it('dates every change the same however often TICKs reveal it', () => {
    const run = (ticked: readonly LoopInput[]) => stepLoopAll(initialLoopClassifier(), ticked, DEFAULT_LOOP_SETTINGS).effects;
    const every250 = run(inputs);
    expect(run(withTicks(edges, endMs, 50))).toEqual(every250);
    expect(run(withTicks(edges, endMs, 125))).toEqual(every250);
    // Edges only, with one TICK at the end to reveal what the last window did.
    expect(run([...edges, tick('N', endMs)])).toEqual(every250);
  });
});
