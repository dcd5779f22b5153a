import type { Condition } from '../model/condition.js';
import type { AlarmBook } from './alarmBook.js';
import type { AlarmEffect } from './alarmTypes.js';
import type { EscalationPolicy } from './escalationPolicy.js';

/** What the daemon feeds the alarm engine. Conditions come from the classifier and the shell; the rest from people. */
export type AlarmInput =
  /** A condition is present. Idempotent: an alarm already active for source+condition raises nothing. */
  | { kind: 'raise'; source: string; loopId: string | null; condition: Condition; latched: boolean; policy: string | null }
  | { kind: 'clear'; source: string; condition: Condition }
  | { kind: 'ack'; alarmId: number; actor: string; note: string | null }
  | { kind: 'shelve'; alarmId: number; actor: string; durationMs: number; reason: string }
  | { kind: 'unshelve'; alarmId: number; actor: string }
  | { kind: 'out-of-service'; loopId: string; actor: string; note: string }
  | { kind: 'return-to-service'; loopId: string; actor: string; note: string | null }
  /** Time has passed: shelf expiries, escalation steps and repeats that are due. */
  | { kind: 'tick' };

export type AlarmInputKind = AlarmInput['kind'];

export interface AlarmContext {
  /** Escalation policies by name, normally from `policiesFromConfig`. */
  policies: Record<string, EscalationPolicy>;
  /** The longest an operator may shelve an alarm for (config web.max_shelve). */
  maxShelveMs: number;
}

export const ALARM_ERROR_CODES = ['PW_ALARM_NOT_FOUND', 'PW_ALARM_BAD_ACTION'] as const;
export type AlarmErrorCode = (typeof ALARM_ERROR_CODES)[number];

export interface AlarmError {
  code: AlarmErrorCode;
  message: string;
}

/** On a refusal `error` is set, `effects` is empty and `book` is the book passed in. */
export interface AlarmStepResult {
  book: AlarmBook;
  effects: AlarmEffect[];
  error?: AlarmError;
}
