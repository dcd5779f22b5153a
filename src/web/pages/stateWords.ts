import type { AlarmState } from '../../model/alarmState.js';
import type { Priority } from '../../model/condition.js';
import type { LoopState } from '../../model/loopState.js';

/** What the board shows: a loop's state, or that it is out of service (not watched). */
export type BoardState = LoopState | 'out-of-service';

export const BOARD_STATE_LABEL = {
  healthy: 'Healthy',
  tripped: 'Tripped',
  open: 'Open circuit',
  shorted: 'Short circuit',
  offline: 'Decoder offline',
  unknown: 'Not known yet',
  'out-of-service': 'Out of service',
} as const satisfies Record<BoardState, string>;

export const ALARM_STATE_LABEL = {
  unacknowledged: 'not acknowledged',
  acknowledged: 'acknowledged',
  'returned-unacknowledged': 'back to normal, not acknowledged',
  shelved: 'shelved',
  'out-of-service': 'out of service',
  normal: 'closed',
} as const satisfies Record<AlarmState, string>;

export const PRIORITY_LABEL = { alarm: 'Alarm', trouble: 'Trouble', system: 'System trouble' } as const satisfies Record<Priority, string>;

/** Alarm states a person can still acknowledge. */
export const ACKNOWLEDGEABLE = ['unacknowledged', 'returned-unacknowledged'] as const satisfies readonly AlarmState[];
export function canAcknowledge(state: AlarmState): boolean {
  return (ACKNOWLEDGEABLE as readonly string[]).includes(state);
}
export function canShelve(state: AlarmState): boolean {
  return state === 'unacknowledged' || state === 'acknowledged' || state === 'returned-unacknowledged';
}
