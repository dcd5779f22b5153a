/**
 * Alarm states after the alarm-management state model of ANSI/ISA-18.2 and IEC 62682
 * (normal, unacknowledged active, acknowledged active, returned-to-normal unacknowledged, shelved),
 * plus out-of-service, which ISA-18.2 also names.
 */
export const ALARM_STATES = [
  'unacknowledged',
  'acknowledged',
  'returned-unacknowledged',
  'shelved',
  'out-of-service',
  'normal',
] as const;
export type AlarmState = (typeof ALARM_STATES)[number];

/** States in which an alarm is still listed as active on the board and in `status=active`. */
export const LISTED_ALARM_STATES = [
  'unacknowledged',
  'acknowledged',
  'returned-unacknowledged',
  'shelved',
] as const satisfies readonly AlarmState[];
