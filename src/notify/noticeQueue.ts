import type { Database } from 'better-sqlite3';
import type { AlarmEffect } from '../alarms/alarmTypes.js';
import { contactWindowDueAt, insertPendingNotice, nextPendingNoticeDueAt } from '../store/pendingNoticeRepo.js';
import { recordRecipient } from '../store/alarmRepo.js';
import type { Digest, PendingNotice } from '../alarms/noticeTypes.js';

export type NotifyEffect = Extract<AlarmEffect, { kind: 'notify' }>;

/**
 * Queues one notice per contact. Call inside the transaction that commits the state change, so a
 * notice exists exactly when the change does. A contact's grouping window opens with its first
 * waiting notice: later notices join that window instead of pushing it out, so a storm can delay
 * a mail by at most one window.
 */
export function queueNotices(db: Database, effect: NotifyEffect, now: number, groupWindowMs: number): number[] {
  const ids: number[] = [];
  for (const contactId of new Set(effect.contactIds)) {
    const openWindow = contactWindowDueAt(db, contactId);
    const dueAt = openWindow ?? now + Math.max(0, groupWindowMs);
    ids.push(
      insertPendingNotice(db, {
        contactId,
        alarmId: effect.alarmId,
        kind: effect.notice,
        createdAt: now,
        dueAt,
        actor: effect.actor,
        note: effect.note,
      }),
    );
    recordRecipient(db, effect.alarmId, contactId, now);
  }
  return ids;
}

/**
 * Pure: which mails to write now. Once a contact's earliest notice is due, all of that contact's
 * notices go together — one mail per contact listing every condition.
 */
export function planDigests(pending: readonly PendingNotice[], now: number): Digest[] {
  const byContact = new Map<string, PendingNotice[]>();
  for (const notice of pending) {
    const list = byContact.get(notice.contactId);
    if (list) list.push(notice);
    else byContact.set(notice.contactId, [notice]);
  }
  const digests: Digest[] = [];
  for (const [contactId, notices] of byContact) {
    const dueAt = Math.min(...notices.map((n) => n.dueAt));
    if (dueAt > now) continue;
    const ordered = [...notices].sort((a, b) => a.createdAt - b.createdAt || a.id - b.id);
    digests.push({ contactId, dueAt, notices: ordered });
  }
  // One digest per contact, so two contact ids are never equal here.
  // Stryker disable next-line EqualityOperator: `<=` differs from `<` only for equal ids
  return digests.sort((a, b) => a.dueAt - b.dueAt || (a.contactId < b.contactId ? -1 : 1));
}

/** When flushDigests next has work; null when no notice waits. */
export function nextNoticeDueAt(db: Database): number | null {
  return nextPendingNoticeDueAt(db);
}
