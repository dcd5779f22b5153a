/** What the classifier says about one loop. `offline` is set by the shell when the decoder is silent. */
export const LOOP_STATES = ['unknown', 'healthy', 'tripped', 'open', 'shorted', 'offline'] as const;
export type LoopState = (typeof LOOP_STATES)[number];

/** States that mean the loop needs attention (each maps to a condition). */
export const FAULT_LOOP_STATES = ['tripped', 'open', 'shorted'] as const satisfies readonly LoopState[];
export type FaultLoopState = (typeof FAULT_LOOP_STATES)[number];

export function isFaultState(state: LoopState): state is FaultLoopState {
  return (FAULT_LOOP_STATES as readonly string[]).includes(state);
}
