import type { AlarmRecord } from '../alarms/alarmTypes.js';
import { composeNoticeMail } from '../notify/composeNoticeMail.js';
import type { MailTransport } from '../notify/mailTransport.js';
import { planDigests, type NotifyEffect } from '../notify/noticeQueue.js';
import type { NoticeAlarm, PendingNotice } from '../alarms/noticeTypes.js';
import type { NoticeSettings } from '../notify/noticeSettings.js';
import { retryDelayMs } from '../notify/retryDelay.js';

/**
 * Alarm mail while the database cannot be written. The notices of an alarm raised while storage fails
 * cannot wait in pending_notices (that table is on the failing disk), so they are "claimed" here instead
 * and mailed straight from memory, grouped per contact by the same window as ever. The commit that
 * holds the alarm is still queued in the durable writer; when it is finally written it sees the claim
 * and records only who was told, not a second notice — so each notice is mailed exactly once.
 *
 * Once storage writes again, notices still unsent here are handed back to pending_notices (due at once)
 * and the outbox takes over. On a stop they are mailed at once, whatever their window.
 */
export interface DirectNoticesOptions {
  settings: NoticeSettings;
  transport: Pick<MailTransport, 'send'>;
  groupWindowMs: number;
  retryFirstMs: number;
  retryMaxMs: number;
}

export interface DirectNoticeSent {
  alarmIds: number[];
  contactId: string;
  subject: string;
  at: number;
}

interface Claimed extends PendingNotice {
  effect: NotifyEffect;
}

export function createDirectNotices(options: DirectNoticesOptions) {
  const claimedEffects = new WeakSet<NotifyEffect>();
  let waiting: Claimed[] = [];
  const alarms = new Map<number, AlarmRecord>();
  const told = new Map<number, Set<string>>();
  let nextId = -1;
  let failures = 0;
  let notBefore = 0;

  const toNoticeAlarm = (a: AlarmRecord): NoticeAlarm => ({
    id: a.id,
    source: a.source,
    loopId: a.loopId,
    condition: a.condition,
    priority: a.priority,
    state: a.state,
    active: a.active,
    raisedAt: a.raisedAt,
    clearedAt: a.clearedAt,
    ackedAt: a.ackedAt,
    ackedBy: a.ackedBy,
    note: a.note,
    shelvedUntil: a.shelvedUntil,
    shelveReason: a.shelveReason,
    threadMessageId: null,
  });

  return {
    /** Takes the notices of `effect` over; the commit's work must then not queue them (see isClaimed). */
    claim(effect: NotifyEffect, alarm: AlarmRecord | null, now: number): void {
      if (claimedEffects.has(effect)) return;
      claimedEffects.add(effect);
      if (alarm) alarms.set(alarm.id, alarm);
      for (const contactId of new Set(effect.contactIds)) {
        // The same grouping rule as pending_notices: a contact's window opens with the first notice.
        const open = waiting.find((n) => n.contactId === contactId);
        waiting.push({
          id: nextId--,
          contactId,
          alarmId: effect.alarmId,
          kind: effect.notice,
          createdAt: now,
          dueAt: open?.dueAt ?? now + Math.max(0, options.groupWindowMs),
          actor: effect.actor,
          note: effect.note,
          effect,
        });
      }
    },
    isClaimed(effect: NotifyEffect): boolean {
      return claimedEffects.has(effect);
    },
    /** The latest state of an alarm a claimed notice is about, so the mail shows it as it stands. */
    noteAlarm(alarm: AlarmRecord): void {
      if (alarms.has(alarm.id)) alarms.set(alarm.id, alarm);
    },
    pending(): number {
      return waiting.length;
    },
    /** Notices not yet mailed, for the stop log and the fallback file. */
    unsent(): ReadonlyArray<Omit<Claimed, 'effect'>> {
      return waiting.map(({ effect: _effect, ...notice }) => notice);
    },
    /**
     * Mails every digest due by `now` (all of them with `flushAll`). A failed send keeps the contact's
     * notices and backs off like the outbox does. Resolves with what went out; never rejects.
     */
    async round(now: number, flushAll = false): Promise<DirectNoticeSent[]> {
      const sent: DirectNoticeSent[] = [];
      if (waiting.length === 0 || (!flushAll && now < notBefore)) return sent;
      for (const digest of planDigests(waiting, flushAll ? Infinity : now)) {
        const ids = new Set(digest.notices.map((n) => n.id));
        const alarmIds = [...new Set(digest.notices.map((n) => n.alarmId).filter((id): id is number => id !== null))];
        const recipients = new Map<number, string[]>();
        for (const id of alarmIds) recipients.set(id, [...(told.get(id) ?? []), digest.contactId]);
        const alarmMap = new Map<number, NoticeAlarm>();
        for (const id of alarmIds) {
          const alarm = alarms.get(id);
          if (alarm) alarmMap.set(id, toNoticeAlarm(alarm));
        }
        try {
          const message = composeNoticeMail(digest, { ...options.settings, now, alarms: alarmMap, recipients });
          await options.transport.send(message, { date: now });
          waiting = waiting.filter((n) => !ids.has(n.id));
          for (const id of alarmIds) told.set(id, new Set([...(told.get(id) ?? []), digest.contactId]));
          sent.push({ alarmIds, contactId: digest.contactId, subject: message.subject, at: now });
          failures = 0;
        } catch {
          failures += 1;
          notBefore = now + retryDelayMs(failures, { firstMs: options.retryFirstMs, maxMs: options.retryMaxMs });
          break;
        }
      }
      return sent;
    },
    /** Storage writes again: what is still unsent goes back to the outbox's queue, due at once. */
    handBack(now: number): PendingNotice[] {
      const back = waiting.map(({ effect: _effect, ...notice }) => ({ ...notice, dueAt: Math.min(notice.dueAt, now) }));
      waiting = [];
      failures = 0;
      notBefore = 0;
      return back;
    },
  };
}

export type DirectNotices = ReturnType<typeof createDirectNotices>;
