import type { AlarmState } from '../model/alarmState.js';
import type { Condition, Priority } from '../model/condition.js';

/** Escalation bookkeeping for one alarm, owned by the pure escalation planner. Times: epoch ms. */
export interface EscalationProgress {
  /** How many of the policy's steps have fired. */
  stepsDone: number;
  /**
   * How many repeat slots (raisedAt + k·repeat_every) have been used up. After a catch-up one repeat
   * notice stands for every slot missed, so this may run ahead of the number of repeat mails sent.
   */
  repeatsDone: number;
  /** When the planner next has something to do (next step or repeat); null when finished or stopped. */
  nextAt: number | null;
  /** Every contact told so far, in the order first told. */
  notified: string[];
}

/**
 * One alarm (any priority) as plain data. `source` is what the condition belongs to: a loop id,
 * a decoder id, or 'system'. Times are epoch milliseconds (host clock, UTC).
 */
export interface AlarmRecord {
  id: number;
  source: string;
  loopId: string | null;
  condition: Condition;
  priority: Priority;
  state: AlarmState;
  /** The condition is present now. */
  active: boolean;
  latched: boolean;
  /** Escalation policy name; null: nobody is notified. */
  policy: string | null;
  raisedAt: number;
  clearedAt: number | null;
  ackedAt: number | null;
  ackedBy: string | null;
  note: string | null;
  shelvedUntil: number | null;
  shelveReason: string | null;
  /** Set when the alarm leaves the list for good (normal after ack, or condition ended while acknowledged). */
  closedAt: number | null;
  escalation: EscalationProgress;
}

/** What a notice to a contact is about. */
export const NOTICE_KINDS = ['raised', 'escalated', 'repeat', 'acknowledged', 'cleared', 'shelved', 'unshelved'] as const;
export type NoticeKind = (typeof NOTICE_KINDS)[number];

/** Audit actions, one row each (who, when, note). */
export const AUDIT_ACTIONS = [
  'raise', 'clear', 'acknowledge', 'shelve', 'unshelve', 'shelve-expired', 'out-of-service', 'return-to-service',
  'escalation-step', 'repeat', 'mail-sent', 'mail-failed', 'close', 'mail-reply', 'mail-dropped',
] as const;
export type AuditAction = (typeof AUDIT_ACTIONS)[number];

export interface AuditEntry {
  at: number;
  actor: string;
  action: AuditAction;
  alarmId: number | null;
  loopId: string | null;
  note: string | null;
}

/** Something for the shell to do, produced by the pure alarm engine; committed in the caller's transaction. */
export type AlarmEffect =
  | { kind: 'alarm'; alarm: AlarmRecord }
  | { kind: 'audit'; entry: AuditEntry }
  | { kind: 'notify'; alarmId: number; contactIds: string[]; notice: NoticeKind; actor: string | null; note: string | null };
