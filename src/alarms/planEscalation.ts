import type { AlarmRecord, EscalationProgress } from './alarmTypes.js';
import type { EscalationPolicy } from './escalationPolicy.js';

export type PlannedNoticeKind = 'raised' | 'escalated' | 'repeat';

export interface PlannedNotice {
  contactIds: string[];
  notice: PlannedNoticeKind;
  /** For steps: the step's index in the policy. */
  stepIndex: number | null;
  /** For repeats: the last repeat slot this notice stands for (1-based). */
  repeatSlot: number | null;
  /** For repeats: how many repeat slots this one notice covers (more than 1 after a catch-up). */
  slotsCovered: number;
}

export interface EscalationPlan {
  progress: EscalationProgress;
  notices: PlannedNotice[];
}

export function freshProgress(): EscalationProgress {
  return { stepsDone: 0, repeatsDone: 0, nextAt: null, notified: [] };
}

/**
 * Works out what is due for one alarm at `now`, given what has already been done.
 *
 * The timeline is anchored at `alarm.raisedAt`: step i is due at raisedAt + steps[i].afterMs, repeat
 * slot k (1..maxRepeats) at raisedAt + k·repeatEveryMs. Each due step fires exactly once (also when
 * `now` jumped past several, e.g. the daemon was down). All repeat slots that have passed are
 * consumed by ONE repeat notice, so a late wake-up never sends a burst; `repeatsDone` therefore counts
 * slots used up, and maxRepeats bounds how long reminders go on. A repeat goes to everyone notified so
 * far except those told by a step in this same call. `nextAt` is recomputed every time from the
 * counters, so the caller may stop escalation (nextAt = null) and later resume it by calling again.
 */
export function planEscalation(alarm: AlarmRecord, policy: EscalationPolicy, now: number): EscalationPlan {
  const start = alarm.raisedAt;
  const prior = alarm.escalation;
  const notified = [...prior.notified];
  const toldNow = new Set<string>();
  const notices: PlannedNotice[] = [];

  let stepsDone = prior.stepsDone;
  for (;;) {
    const step = policy.steps[stepsDone];
    if (step === undefined || start + step.afterMs > now) break;
    const contactIds = [...new Set(step.contactIds)];
    if (contactIds.length > 0) {
      notices.push({ contactIds, notice: stepsDone === 0 ? 'raised' : 'escalated', stepIndex: stepsDone, repeatSlot: null, slotsCovered: 0 });
    }
    for (const contactId of contactIds) {
      toldNow.add(contactId);
      if (!notified.includes(contactId)) notified.push(contactId);
    }
    stepsDone += 1;
  }

  let repeatsDone = prior.repeatsDone;
  const every = policy.repeatEveryMs;
  // Before the raise time (clock stepped back) the slot count is negative and nothing is due.
  // Stryker disable next-line ConditionalExpression: null > 0 is false, so the null check alone decides nothing
  if (every !== null && every > 0) {
    const slotsPassed = Math.min(policy.maxRepeats, Math.floor((now - start) / every));
    if (slotsPassed > repeatsDone) {
      const recipients = notified.filter((contactId) => !toldNow.has(contactId));
      if (recipients.length > 0) {
        notices.push({ contactIds: recipients, notice: 'repeat', stepIndex: null, repeatSlot: slotsPassed, slotsCovered: slotsPassed - repeatsDone });
      }
      repeatsDone = slotsPassed;
    }
  }

  const nextStep = policy.steps[stepsDone];
  const nextStepAt = nextStep === undefined ? null : start + nextStep.afterMs;
  // Stryker disable next-line ConditionalExpression: null > 0 is false, so the null check alone decides nothing
  const nextRepeatAt = every !== null && every > 0 && repeatsDone < policy.maxRepeats ? start + (repeatsDone + 1) * every : null;
  const nextAt = nextStepAt === null ? nextRepeatAt : nextRepeatAt === null ? nextStepAt : Math.min(nextStepAt, nextRepeatAt);

  return { progress: { stepsDone, repeatsDone, nextAt, notified }, notices };
}
