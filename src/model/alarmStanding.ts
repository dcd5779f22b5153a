import type { AlarmState } from './alarmState.js';

/**
 * How an alarm stands, for people: the ISA-18.2 state read together with whether the condition is
 * present. A latched alarm whose condition has gone keeps the state `unacknowledged` (it still
 * escalates), with `active: false`; for a reader that is the same thing as ISA-18.2's
 * returned-to-normal-unacknowledged, and both read "back to normal — still needs acknowledging".
 * Pages, mail and the API docs all take their words from here, so they cannot disagree.
 */
export const ALARM_STANDINGS = ['active-unacknowledged', 'active-acknowledged', 'cleared-unacknowledged', 'shelved', 'out-of-service', 'closed'] as const;
export type AlarmStanding = (typeof ALARM_STANDINGS)[number];

export function alarmStanding(state: AlarmState, active: boolean): AlarmStanding {
  switch (state) {
    case 'unacknowledged':
      return active ? 'active-unacknowledged' : 'cleared-unacknowledged';
    case 'returned-unacknowledged':
      return 'cleared-unacknowledged';
    case 'acknowledged':
      return 'active-acknowledged';
    case 'shelved':
      return 'shelved';
    case 'out-of-service':
      return 'out-of-service';
    case 'normal':
      return 'closed';
  }
}

/** The one phrase for an alarm whose condition has gone but that nobody has acknowledged yet. */
export const BACK_TO_NORMAL_NEEDS_ACK = 'back to normal — still needs acknowledging';

export const STANDING_WORDS = {
  'active-unacknowledged': 'active, not acknowledged',
  'active-acknowledged': 'active, acknowledged',
  'cleared-unacknowledged': BACK_TO_NORMAL_NEEDS_ACK,
  shelved: 'shelved',
  'out-of-service': 'out of service',
  closed: 'closed',
} as const satisfies Record<AlarmStanding, string>;

/** Standings that still want a person: they keep an attention style until acknowledged. */
export function needsAcknowledging(standing: AlarmStanding): boolean {
  return standing === 'active-unacknowledged' || standing === 'cleared-unacknowledged';
}
