import type { Condition } from '../model/condition.js';
import { PRIORITY_RANK } from '../model/condition.js';
import type { AlarmRecord } from './alarmTypes.js';

/** A loop taken out of service for maintenance, and why. */
export interface OutOfServiceLoop {
  loopId: string;
  note: string;
}

/**
 * A condition that came up on a loop while it was out of service. It raises nothing, but is kept so
 * that returning the loop to service raises it afresh. Not persisted: after a restart the classifier
 * reports present conditions again.
 */
export interface SuppressedCondition {
  source: string;
  loopId: string;
  condition: Condition;
  latched: boolean;
  policy: string | null;
  since: number;
}

/** Everything the alarm engine knows, as plain data. The daemon is its single writer. */
export interface AlarmBook {
  /** Open alarms (closedAt null), in ascending id order. */
  readonly alarms: readonly AlarmRecord[];
  /** The id the next new alarm gets. */
  readonly nextId: number;
  readonly outOfService: readonly OutOfServiceLoop[];
  readonly suppressed: readonly SuppressedCondition[];
}

/** Builds the book from what the store holds at start-up: open alarms, the next id, loops out of service. */
export function initialAlarmBook(openAlarms: AlarmRecord[], nextId: number, outOfService: Array<{ loopId: string; note: string }>): AlarmBook {
  const alarms = openAlarms.filter((alarm) => alarm.closedAt === null).sort((a, b) => a.id - b.id);
  // Never hand out an id the store already used, even if the caller's count is behind.
  const highest = alarms.reduce((max, alarm) => Math.max(max, alarm.id), 0);
  const start = Number.isSafeInteger(nextId) && nextId > highest ? nextId : highest + 1;
  return { alarms, nextId: start, outOfService: outOfService.map(({ loopId, note }) => ({ loopId, note })), suppressed: [] };
}

/** Open alarms, alarms first, then trouble, then system; oldest first within each. */
export function openAlarms(book: AlarmBook): AlarmRecord[] {
  return [...book.alarms].sort((a, b) => PRIORITY_RANK[a.priority] - PRIORITY_RANK[b.priority] || a.id - b.id);
}

/** The earliest moment a `tick` has something to do (an escalation step or repeat, or a shelf expiry); null when nothing is pending. */
export function nextWakeAt(book: AlarmBook): number | null {
  let earliest: number | null = null;
  for (const alarm of book.alarms) {
    const due =
      alarm.state === 'unacknowledged' ? alarm.escalation.nextAt : alarm.state === 'shelved' ? alarm.shelvedUntil : null;
    // Stryker disable next-line EqualityOperator: on a tie (due === earliest) either choice leaves the same time
    if (due !== null && (earliest === null || due < earliest)) earliest = due;
  }
  return earliest;
}

/** A condition with no loop (null) is never out of service: entries always name a loop. */
export function isOutOfService(book: AlarmBook, loopId: string | null): boolean {
  return book.outOfService.some((entry) => entry.loopId === loopId);
}
