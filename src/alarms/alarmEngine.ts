import type { Condition } from '../model/condition.js';
import { CONDITION_PRIORITY } from '../model/condition.js';
import type { AlarmBook } from './alarmBook.js';
import type { ActionMeta, Work } from './alarmCommit.js';
import { SYSTEM_ACTOR, audit, commit, resolvePolicy } from './alarmCommit.js';
import type { AlarmContext, AlarmError, AlarmInput, AlarmStepResult } from './alarmInput.js';
import type { LifecycleEvent } from './alarmLifecycle.js';
import { applyAlarmEvent } from './alarmLifecycle.js';
import type { AlarmRecord } from './alarmTypes.js';
import { freshProgress } from './planEscalation.js';

export { initialAlarmBook, nextWakeAt, openAlarms } from './alarmBook.js';
export type { AlarmBook, OutOfServiceLoop, SuppressedCondition } from './alarmBook.js';
export type { AlarmContext, AlarmError, AlarmInput, AlarmStepResult } from './alarmInput.js';

export { SYSTEM_ACTOR } from './alarmCommit.js';

const refusal = (code: AlarmError['code'], message: string): AlarmError => ({ code, message });

/**
 * The alarm engine: one input at `now` (epoch ms) against the book, giving the next book and the
 * effects for the shell to commit in one transaction (alarm rows, audit rows, notices). Pure.
 */
export function stepAlarms(book: AlarmBook, input: AlarmInput, now: number, ctx: AlarmContext): AlarmStepResult {
  const work: Work = {
    alarms: new Map(book.alarms.map((alarm) => [alarm.id, alarm])),
    nextId: book.nextId,
    outOfService: [...book.outOfService],
    suppressed: [...book.suppressed],
    effects: [],
    now,
    ctx,
  };
  const error = handle(work, input);
  if (error) return { book, effects: [], error };
  return {
    book: {
      alarms: [...work.alarms.values()].sort((a, b) => a.id - b.id),
      nextId: work.nextId,
      outOfService: work.outOfService,
      suppressed: work.suppressed,
    },
    effects: work.effects,
  };
}

function handle(work: Work, input: AlarmInput): AlarmError | undefined {
  switch (input.kind) {
    case 'raise':
      return raise(work, input, null);
    case 'clear':
      return clear(work, input.source, input.condition);
    case 'ack':
      return actOn(work, input.alarmId, (alarm) => {
        const actor = input.actor.trim();
        if (!actor) return refusal('PW_ALARM_BAD_ACTION', 'an acknowledgement must name who makes it');
        const note = input.note?.trim() || null;
        return {
          event: { kind: 'acknowledge', actor, note },
          meta: { actor, action: 'acknowledge', note, noticeActor: actor, noticeNote: note },
        };
      });
    case 'shelve':
      return actOn(work, input.alarmId, () => {
        const actor = input.actor.trim();
        const reason = input.reason.trim();
        const maxMinutes = Math.floor(work.ctx.maxShelveMs / 60_000);
        if (!actor) return refusal('PW_ALARM_BAD_ACTION', 'shelving must name who does it');
        if (!reason) return refusal('PW_ALARM_BAD_ACTION', 'shelving needs a reason');
        if (!Number.isFinite(input.durationMs) || input.durationMs <= 0) {
          return refusal('PW_ALARM_BAD_ACTION', 'the shelve time must be a positive duration');
        }
        if (input.durationMs > work.ctx.maxShelveMs) {
          return refusal('PW_ALARM_BAD_ACTION', `an alarm may be shelved for at most ${maxMinutes} minutes`);
        }
        const until = work.now + input.durationMs;
        return {
          event: { kind: 'shelve', actor, until, reason },
          meta: { actor, action: 'shelve', note: `${reason} (until ${new Date(until).toISOString()})`, noticeActor: actor, noticeNote: reason },
        };
      });
    case 'unshelve':
      return actOn(work, input.alarmId, () => {
        const actor = input.actor.trim();
        if (!actor) return refusal('PW_ALARM_BAD_ACTION', 'unshelving must name who does it');
        return { event: { kind: 'unshelve', actor }, meta: { actor, action: 'unshelve', note: null, noticeActor: actor, noticeNote: null } };
      });
    case 'out-of-service':
      return takeOutOfService(work, input.loopId, input.actor, input.note);
    case 'return-to-service':
      return returnToService(work, input.loopId, input.actor, input.note);
    case 'tick':
      tick(work);
      return undefined;
    default:
      return refusal('PW_ALARM_BAD_ACTION', `unknown alarm input "${String((input as { kind?: unknown }).kind)}"`);
  }
}

// ---- people acting on one alarm -------------------------------------------------------------

function actOn(
  work: Work,
  alarmId: number,
  prepare: (alarm: AlarmRecord) => { event: LifecycleEvent; meta: ActionMeta } | AlarmError,
): AlarmError | undefined {
  const alarm = work.alarms.get(alarmId);
  if (alarm === undefined) {
    // Ids are handed out in order and alarms are never deleted, so a lower id is one that has closed.
    if (Number.isSafeInteger(alarmId) && alarmId >= 1 && alarmId < work.nextId) {
      return refusal('PW_ALARM_BAD_ACTION', `alarm ${alarmId} is already closed`);
    }
    return refusal('PW_ALARM_NOT_FOUND', `there is no alarm ${String(alarmId)}`);
  }
  const prepared = prepare(alarm);
  if ('code' in prepared) return prepared;
  const outcome = applyAlarmEvent(alarm, prepared.event, work.now);
  if (!outcome.ok) return refusal(outcome.code, outcome.message);
  // Stryker disable next-line ConditionalExpression: acknowledge, shelve and unshelve either change the alarm or are refused (alarmLifecycle.ts)
  if (outcome.changed) commit(work, alarm, outcome, prepared.meta);
  return undefined;
}

// ---- conditions coming and going ------------------------------------------------------------

/** What raising needs to know; `kind` is left out so conditions re-raised on return to service need not carry it. */
type RaiseInput = Omit<Extract<AlarmInput, { kind: 'raise' }>, 'kind'>;

function findOpen(work: Work, source: string, condition: Condition): AlarmRecord | undefined {
  let found: AlarmRecord | undefined;
  for (const alarm of work.alarms.values()) {
    // Stryker disable next-line EqualityOperator: ids are unique, so alarm.id never equals found.id
    if (alarm.source === source && alarm.condition === condition && (found === undefined || alarm.id > found.id)) found = alarm;
  }
  return found;
}

function raise(work: Work, input: RaiseInput, why: string | null): AlarmError | undefined {
  if (!Object.hasOwn(CONDITION_PRIORITY, input.condition)) {
    return refusal('PW_ALARM_BAD_ACTION', `"${String(input.condition)}" is not a condition the monitor knows`);
  }
  const existing = findOpen(work, input.source, input.condition);
  if (existing !== undefined) {
    const outcome = applyAlarmEvent(existing, { kind: 'condition-active' }, work.now);
    if (outcome.ok && outcome.changed) {
      const hidden = existing.state === 'shelved' || existing.state === 'out-of-service';
      const note = hidden ? `condition present again (alarm is ${existing.state}: not announced)` : 'condition present again';
      commit(work, existing, outcome, { actor: SYSTEM_ACTOR, action: 'raise', note, noticeActor: null, noticeNote: null });
    }
    return undefined;
  }

  if (loopIsOut(work, input.loopId)) {
    const already = work.suppressed.some((s) => s.source === input.source && s.condition === input.condition);
    if (!already) {
      work.suppressed.push({ source: input.source, loopId: input.loopId, condition: input.condition, latched: input.latched, policy: input.policy, since: work.now });
      audit(work, SYSTEM_ACTOR, 'raise', null, input.loopId, `${input.condition} on ${input.source} while the loop is out of service: not raised`);
    }
    return undefined;
  }

  const { note: policyNote } = resolvePolicy(work.ctx, input.policy);
  const fresh: AlarmRecord = {
    id: work.nextId,
    source: input.source,
    loopId: input.loopId,
    condition: input.condition,
    priority: CONDITION_PRIORITY[input.condition],
    state: 'unacknowledged',
    active: true,
    latched: input.latched,
    policy: input.policy,
    raisedAt: work.now,
    clearedAt: null,
    ackedAt: null,
    ackedBy: null,
    note: null,
    shelvedUntil: null,
    shelveReason: null,
    closedAt: null,
    escalation: freshProgress(),
  };
  work.nextId += 1;
  const note = [`${fresh.priority}: ${fresh.condition} on ${fresh.source}`, why, policyNote].filter(Boolean).join('; ');
  commit(work, null, { alarm: fresh, escalation: 'resume', notice: null }, {
    actor: SYSTEM_ACTOR, action: 'raise', note, noticeActor: null, noticeNote: null,
  });
  return undefined;
}

function clear(work: Work, source: string, condition: Condition): AlarmError | undefined {
  const existing = findOpen(work, source, condition);
  if (existing !== undefined) {
    const outcome = applyAlarmEvent(existing, { kind: 'condition-clear' }, work.now);
    if (outcome.ok && outcome.changed) {
      const note =
        outcome.alarm.state === 'unacknowledged' ? 'condition cleared; latched, so it stays until acknowledged'
        : outcome.alarm.state === 'returned-unacknowledged' ? 'condition cleared before anyone acknowledged'
        : outcome.alarm.state === 'normal' ? 'condition cleared'
        : `condition cleared while ${existing.state}`;
      commit(work, existing, outcome, { actor: SYSTEM_ACTOR, action: 'clear', note, noticeActor: null, noticeNote: null });
    }
    return undefined;
  }
  const index = work.suppressed.findIndex((s) => s.source === source && s.condition === condition);
  if (index >= 0) {
    const [gone] = work.suppressed.splice(index, 1);
    audit(work, SYSTEM_ACTOR, 'clear', null, gone!.loopId, `${condition} on ${source} cleared while the loop is out of service`);
  }
  return undefined;
}

// ---- loops out of and back into service -----------------------------------------------------

function takeOutOfService(work: Work, loopId: string, actorText: string, noteText: string): AlarmError | undefined {
  const actor = actorText.trim();
  const note = noteText.trim();
  if (!actor) return refusal('PW_ALARM_BAD_ACTION', 'taking a loop out of service must name who does it');
  if (!note) return refusal('PW_ALARM_BAD_ACTION', 'taking a loop out of service needs a reason');
  if (loopIsOut(work, loopId)) return refusal('PW_ALARM_BAD_ACTION', `loop ${loopId} is already out of service`);

  work.outOfService.push({ loopId, note });
  audit(work, actor, 'out-of-service', null, loopId, note);
  for (const alarm of loopAlarms(work, loopId)) {
    const outcome = applyAlarmEvent(alarm, { kind: 'remove-from-service' }, work.now);
    // Stryker disable next-line ConditionalExpression,LogicalOperator: every open alarm on a loop still in service changes when the loop is taken out
    if (outcome.ok && outcome.changed) {
      commit(work, alarm, outcome, { actor, action: 'out-of-service', note, noticeActor: actor, noticeNote: note });
    }
  }
  return undefined;
}

function returnToService(work: Work, loopId: string, actorText: string, noteText: string | null): AlarmError | undefined {
  const actor = actorText.trim();
  const note = noteText?.trim() || null;
  if (!actor) return refusal('PW_ALARM_BAD_ACTION', 'returning a loop to service must name who does it');
  if (!loopIsOut(work, loopId)) return refusal('PW_ALARM_BAD_ACTION', `loop ${loopId} is not out of service`);

  work.outOfService = work.outOfService.filter((entry) => entry.loopId !== loopId);
  audit(work, actor, 'return-to-service', null, loopId, note);

  // Stryker disable next-line ArrayDeclaration: a stray entry has no condition, so raise() refuses it and the refusal is not used here
  const present: RaiseInput[] = [];
  for (const alarm of loopAlarms(work, loopId)) {
    const outcome = applyAlarmEvent(alarm, { kind: 'return-to-service' }, work.now);
    // Stryker disable next-line ConditionalExpression,LogicalOperator: every alarm on a loop out of service is itself out of service, so it always changes on return
    if (!outcome.ok || !outcome.changed) continue;
    if (alarm.active) {
      present.push({ source: alarm.source, loopId: alarm.loopId, condition: alarm.condition, latched: alarm.latched, policy: alarm.policy });
    }
    commit(work, alarm, outcome, { actor, action: 'return-to-service', note, noticeActor: actor, noticeNote: note });
  }
  // Stryker disable next-line MethodExpression,ConditionalExpression: another loop's kept condition passed to raise() is kept again, as that loop is still out of service
  const held = work.suppressed.filter((s) => s.loopId === loopId);
  work.suppressed = work.suppressed.filter((s) => s.loopId !== loopId);
  for (const s of held) present.push({ source: s.source, loopId: s.loopId, condition: s.condition, latched: s.latched, policy: s.policy });

  for (const condition of present) raise(work, condition, 'present when the loop returned to service');
  return undefined;
}

function loopAlarms(work: Work, loopId: string): AlarmRecord[] {
  return [...work.alarms.values()].filter((alarm) => alarm.loopId === loopId).sort((a, b) => a.id - b.id);
}

// ---- time passing ---------------------------------------------------------------------------

function tick(work: Work): void {
  const now = work.now;
  for (const alarm of [...work.alarms.values()].sort((a, b) => a.id - b.id)) {
    if (alarm.state === 'shelved') {
      // The lifecycle decides whether the shelf time is up (and leaves the alarm alone if not).
      const outcome = applyAlarmEvent(alarm, { kind: 'shelve-expiry' }, now);
      if (outcome.ok && outcome.changed) {
        commit(work, alarm, outcome, { actor: SYSTEM_ACTOR, action: 'shelve-expired', note: 'shelve time ended', noticeActor: null, noticeNote: null });
      }
    } else if (alarm.state === 'unacknowledged' && alarm.escalation.nextAt !== null && alarm.escalation.nextAt <= now) {
      commit(work, alarm, { alarm, escalation: 'resume', notice: null }, null);
    }
  }
}

/** A condition with no loop (decoder or system trouble) never matches: loops out of service are named by id. */
function loopIsOut(work: Work, loopId: string | null): loopId is string {
  return work.outOfService.some((entry) => entry.loopId === loopId);
}
