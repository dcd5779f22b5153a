import type { Band } from '../../src/model/band.js';
import type { LoopState } from '../../src/model/loopState.js';

/**
 * What one loop's wire does in the detection bench, and when each state must be confirmed. The
 * windows come from the protocol notes' defaults (issue "Foundation", loop classification), not from
 * the classifier: heartbeat every 500 ms, trip after 1500 ms without a valid pulse (counted from the
 * last pulse's start, as intervals are), open/short after 200 ms in band O/H, healthy at the end of
 * the third consecutive pulse in rhythm (0.5–1.5 × period).
 */
export const PERIOD_US = 500_000;
export const PULSE_US = 1_000;
export const TRIP_US = 1_500_000;
export const OPEN_US = 200_000;
export const SHORT_US = 200_000;
const HEALTHY_PULSES = 3;
/** Each fault lasts long enough that the first pulse after it is out of rhythm (> 1.5 periods). */
const FAULT_HOLD_US = 800_000;

export interface WireEdge {
  atUs: number;
  input: number;
  band: Band;
}

export interface ExpectedTransition {
  input: number;
  state: LoopState;
  /** Decoder time at which the state's confirmation window has run out. */
  windowEndUs: number;
}

export function transitionScript(input: number, startUs: number, cycles: number): { edges: WireEdge[]; expected: ExpectedTransition[] } {
  const edges: WireEdge[] = [];
  const expected: ExpectedTransition[] = [];
  let t = startUs;
  const expect = (state: LoopState, windowEndUs: number) => expected.push({ input, state, windowEndUs });
  /** Four pulses in rhythm; healthy is confirmed as the third one ends. Returns the last pulse's start. */
  const pulses = (): number => {
    for (let k = 0; k < HEALTHY_PULSES + 1; k++) {
      edges.push({ atUs: t, input, band: 'H' }, { atUs: t + PULSE_US, input, band: 'N' });
      if (k === HEALTHY_PULSES - 1) expect('healthy', t + PULSE_US);
      t += PERIOD_US;
    }
    return t - PERIOD_US;
  };

  let lastPulseUs = pulses();
  for (let c = 0; c < cycles; c++) {
    // The node stops pulsing (its reading crossed the threshold).
    expect('tripped', lastPulseUs + TRIP_US);
    t = lastPulseUs + TRIP_US + 300_000;
    lastPulseUs = pulses();

    // The cable is cut, then repaired.
    const cutUs = lastPulseUs + 250_000;
    edges.push({ atUs: cutUs, input, band: 'O' });
    expect('open', cutUs + OPEN_US);
    edges.push({ atUs: cutUs + FAULT_HOLD_US, input, band: 'N' });
    t = cutUs + FAULT_HOLD_US + 200_000;
    lastPulseUs = pulses();

    // The pair is shorted, then cleared.
    const shortUs = lastPulseUs + 250_000;
    edges.push({ atUs: shortUs, input, band: 'H' });
    expect('shorted', shortUs + SHORT_US);
    edges.push({ atUs: shortUs + FAULT_HOLD_US, input, band: 'N' });
    t = shortUs + FAULT_HOLD_US + 200_000;
    lastPulseUs = pulses();
  }
  return { edges, expected };
}
