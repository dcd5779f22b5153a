import type { AlarmContext } from './alarmInput.js';
import type { LifecycleOutcome } from './alarmLifecycle.js';
import type { AlarmEffect, AlarmRecord, AuditAction, NoticeKind } from './alarmTypes.js';
import type { OutOfServiceLoop, SuppressedCondition } from './alarmBook.js';
import type { EscalationPolicy } from './escalationPolicy.js';
import { DEFAULT_POLICY_NAME } from './escalationPolicy.js';
import type { PlannedNotice } from './planEscalation.js';
import { planEscalation } from './planEscalation.js';

/**
 * The engine's working state for one step, and how a lifecycle transition becomes effects:
 * escalation planning, audit rows and notices. Shared by the input handlers in alarmEngine.ts.
 */

/** The actor named in the audit trail for everything the monitor does by itself. */
export const SYSTEM_ACTOR = 'system';

/** One step's scratch copy of the book; `stepAlarms` never mutates what it was given. */
export interface Work {
  alarms: Map<number, AlarmRecord>;
  nextId: number;
  outOfService: OutOfServiceLoop[];
  suppressed: SuppressedCondition[];
  effects: AlarmEffect[];
  now: number;
  ctx: AlarmContext;
}

/** Who did it and why, for the audit row and the notice that an action produces. */
export interface ActionMeta {
  actor: string;
  action: AuditAction;
  note: string | null;
  /** Actor and note carried on the notice (null actor: the monitor itself). */
  noticeActor: string | null;
  noticeNote: string | null;
}

/** A transition that changed the alarm; also what the engine builds itself for a new alarm or an escalation tick. */
export type Changed = Pick<Extract<LifecycleOutcome, { changed: true }>, 'alarm' | 'escalation' | 'notice'>;

export function resolvePolicy(ctx: AlarmContext, name: string | null): { policy: EscalationPolicy | null; note: string | null } {
  if (name === null) return { policy: null, note: 'no escalation policy: nobody is notified' };
  const named = ctx.policies[name];
  if (named !== undefined) return { policy: named, note: null };
  const fallback = ctx.policies[DEFAULT_POLICY_NAME] ?? null;
  return {
    policy: fallback,
    note: fallback ? `escalation policy "${name}" is not configured; used "${DEFAULT_POLICY_NAME}"` : `escalation policy "${name}" is not configured: nobody is notified`,
  };
}

/**
 * Applies a changed lifecycle outcome: runs the planner when escalation resumes, then emits in order
 * the alarm row (first, so audit and notice rows can refer to it), audit rows, and notices.
 * `before` is the record as it was (null for a new alarm); `meta` null means a plain escalation tick.
 */
export function commit(work: Work, before: AlarmRecord | null, outcome: Changed, meta: ActionMeta | null): void {
  let alarm = outcome.alarm;
  let planned: PlannedNotice[] = [];
  // Stryker disable next-line ConditionalExpression: every 'resume' (alarmLifecycle.ts, a new alarm, a due tick) comes with state unacknowledged
  if (outcome.escalation === 'resume' && alarm.state === 'unacknowledged') {
    const { policy } = resolvePolicy(work.ctx, alarm.policy);
    if (policy) {
      const plan = planEscalation(alarm, policy, work.now);
      alarm = { ...alarm, escalation: plan.progress };
      planned = plan.notices;
    } else {
      alarm = { ...alarm, escalation: { ...alarm.escalation, nextAt: null } };
    }
  }

  // Stryker disable next-line ArrayDeclaration: only a new alarm has no `before`, and a new alarm's outcome carries no notice, so `told` is never read then
  const told = before?.escalation.notified ?? [];
  const steps = planned.filter((n) => n.notice !== 'repeat');
  const toldByStep = new Set(steps.flatMap((n) => n.contactIds));
  // An action's own notice (e.g. "back from the shelf") replaces a repeat due at the same moment.
  const repeat = outcome.notice === null ? planned.find((n) => n.notice === 'repeat') : undefined;

  work.effects.push({ kind: 'alarm', alarm });
  if (meta) audit(work, meta.actor, meta.action, alarm.id, alarm.loopId, meta.note);
  const policySteps = resolvePolicy(work.ctx, alarm.policy).policy?.steps.length ?? 0;
  for (const step of steps) {
    audit(work, SYSTEM_ACTOR, 'escalation-step', alarm.id, alarm.loopId, `step ${(step.stepIndex ?? 0) + 1} of ${policySteps}: ${step.contactIds.join(', ')}`);
  }
  if (repeat) {
    // Stryker disable next-line OptionalChaining: a repeat is only planned from a policy, so the policy is there whenever this runs
    const maxRepeats = resolvePolicy(work.ctx, alarm.policy).policy?.maxRepeats ?? 0;
    const covers = repeat.slotsCovered > 1 ? ` (one notice for ${repeat.slotsCovered} repeats that fell due while nothing ran)` : '';
    audit(work, SYSTEM_ACTOR, 'repeat', alarm.id, alarm.loopId, `repeat ${repeat.repeatSlot ?? 0} of ${maxRepeats}: ${repeat.contactIds.join(', ')}${covers}`);
  }
  // Stryker disable next-line OptionalChaining: meta is null only for an escalation tick, which never closes an alarm
  if (alarm.closedAt !== null) audit(work, SYSTEM_ACTOR, 'close', alarm.id, alarm.loopId, closeNote(meta?.action));

  if (outcome.notice !== null) {
    // Stryker disable next-line OptionalChaining: meta is null only for an escalation tick, whose outcome carries no notice
    notify(work, alarm.id, told.filter((c) => !toldByStep.has(c)), outcome.notice, meta?.noticeActor ?? null, meta?.noticeNote ?? null);
  }
  for (const step of steps) notify(work, alarm.id, step.contactIds, step.notice, null, null);
  if (repeat) notify(work, alarm.id, repeat.contactIds, 'repeat', null, null);

  if (alarm.closedAt !== null) work.alarms.delete(alarm.id);
  else work.alarms.set(alarm.id, alarm);
}

function closeNote(action: AuditAction | undefined): string {
  switch (action) {
    case 'acknowledge': return 'closed: acknowledged, condition no longer present';
    case 'clear': return 'closed: condition cleared after acknowledgement';
    case 'return-to-service': return 'closed: loop returned to service (conditions still present are raised as new alarms)';
    case 'shelve-expired':
    case 'unshelve': return 'closed: acknowledged before shelving and cleared while shelved';
    // Stryker disable next-line ConditionalExpression,StringLiteral: every action that can close an alarm has its own case above
    default: return 'closed';
  }
}

export function audit(work: Work, actor: string, action: AuditAction, alarmId: number | null, loopId: string | null, note: string | null): void {
  work.effects.push({ kind: 'audit', entry: { at: work.now, actor, action, alarmId, loopId, note } });
}

function notify(work: Work, alarmId: number, contactIds: string[], notice: NoticeKind, actor: string | null, note: string | null): void {
  if (contactIds.length === 0) return;
  work.effects.push({ kind: 'notify', alarmId, contactIds, notice, actor, note });
}

