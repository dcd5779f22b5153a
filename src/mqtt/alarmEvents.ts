import type { AlarmEffect, AlarmRecord, AuditAction } from '../alarms/alarmTypes.js';
import type { AlarmEventKind } from './payloadSchemas.js';
import { alarmRecordPayload, type EventPayload } from './sitePayloads.js';

/** An event before the outbox gives it its number. */
export type EventDraft = Omit<EventPayload, 'eventNo'>;

/** Audit actions that are alarm events on the broker; the rest (mail, escalation steps) stay local. */
const EVENT_OF_ACTION: Partial<Record<AuditAction, AlarmEventKind>> = {
  raise: 'raised',
  acknowledge: 'acknowledged',
  shelve: 'shelved',
  unshelve: 'unshelved',
  'shelve-expired': 'unshelved',
  clear: 'cleared',
  close: 'closed',
};

/**
 * The alarm events in one batch of engine effects, in the order the engine produced them. Each audit
 * entry is paired with its alarm as it stands at the end of the batch (the record the store commits).
 */
export function alarmEventsOf(effects: readonly AlarmEffect[]): EventDraft[] {
  const latest = new Map<number, AlarmRecord>();
  for (const effect of effects) if (effect.kind === 'alarm') latest.set(effect.alarm.id, effect.alarm);
  const drafts: EventDraft[] = [];
  for (const effect of effects) {
    if (effect.kind !== 'audit' || effect.entry.alarmId === null) continue;
    const kind = EVENT_OF_ACTION[effect.entry.action];
    const alarm = latest.get(effect.entry.alarmId);
    if (!kind || !alarm) continue;
    drafts.push({ kind, at: new Date(effect.entry.at).toISOString(), actor: effect.entry.actor, note: effect.entry.note, alarm: alarmRecordPayload(alarm) });
  }
  return drafts;
}
