import type { AlarmState } from '../../model/alarmState.js';
import { alarmStanding, STANDING_WORDS } from '../../model/alarmStanding.js';
import { CONDITION_NAME, type Priority } from '../../model/condition.js';
import type { LoopState } from '../../model/loopState.js';

/** What the board shows: a loop's state, or that it is out of service (not watched). */
export type BoardState = LoopState | 'out-of-service';

const capital = (text: string) => text.charAt(0).toUpperCase() + text.slice(1);

/** One word for one thing: a loop state that is also a condition reads as the condition's name. */
export const BOARD_STATE_LABEL = {
  healthy: 'Healthy',
  tripped: capital(CONDITION_NAME.tripped),
  open: capital(CONDITION_NAME.open),
  shorted: capital(CONDITION_NAME.shorted),
  offline: capital(CONDITION_NAME.offline),
  unknown: 'Not known yet',
  'out-of-service': 'Out of service',
} as const satisfies Record<BoardState, string>;

/**
 * An alarm state alone, for places that do not know whether the condition is present (the estate
 * board). Where `active` is known, use `standingWords`: a latched alarm whose condition has gone is
 * still `unacknowledged` but reads "back to normal — still needs acknowledging".
 */
export const ALARM_STATE_LABEL = {
  unacknowledged: 'not acknowledged',
  acknowledged: STANDING_WORDS['active-acknowledged'],
  'returned-unacknowledged': STANDING_WORDS['cleared-unacknowledged'],
  shelved: STANDING_WORDS.shelved,
  'out-of-service': STANDING_WORDS['out-of-service'],
  normal: STANDING_WORDS.closed,
} as const satisfies Record<AlarmState, string>;

export function standingWords(alarm: { state: AlarmState; active: boolean }): string {
  return STANDING_WORDS[alarmStanding(alarm.state, alarm.active)];
}

export const PRIORITY_LABEL = { alarm: 'Alarm', trouble: 'Trouble', system: 'System trouble' } as const satisfies Record<Priority, string>;

/** Alarm states a person can still acknowledge. */
export const ACKNOWLEDGEABLE = ['unacknowledged', 'returned-unacknowledged'] as const satisfies readonly AlarmState[];
export function canAcknowledge(state: AlarmState): boolean {
  return (ACKNOWLEDGEABLE as readonly string[]).includes(state);
}
export function canShelve(state: AlarmState): boolean {
  return state === 'unacknowledged' || state === 'acknowledged' || state === 'returned-unacknowledged';
}
