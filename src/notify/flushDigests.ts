import type { Database } from 'better-sqlite3';
import { enqueueOutbox, recordMailAudit } from '../store/outboxRepo.js';
import { deletePendingNotices, listPendingNotices, loadNoticeAlarms, setAlarmThreadIds } from '../store/pendingNoticeRepo.js';
import { recipientsOf } from '../store/alarmRepo.js';
import { composeNoticeMail } from './composeNoticeMail.js';
import type { NoticeAlarm } from '../alarms/noticeTypes.js';
import { planDigests } from './noticeQueue.js';
import type { NoticeSettings } from './noticeSettings.js';

export interface FlushResult {
  /** Message-IDs of the outbox rows written. */
  messageIds: string[];
  /** Contacts with waiting notices who are no longer in the configuration (their notices are audited, not mailed). */
  unknownContacts: string[];
}

/**
 * Turns every due digest into an outbox row, in one transaction: the notices leave pending_notices
 * exactly when their mail enters the outbox, so a crash can lose neither. The first mail about an
 * alarm becomes its thread (alarms.thread_message_id).
 */
export function flushDigests(db: Database, now: number, settings: NoticeSettings): FlushResult {
  const run = db.transaction((): FlushResult => {
    const result: FlushResult = { messageIds: [], unknownContacts: [] };
    const digests = planDigests(listPendingNotices(db), now);
    for (const digest of digests) {
      const alarmIds = digest.notices.map((n) => n.alarmId).filter((id): id is number => id !== null);
      if (!settings.contacts.some((c) => c.id === digest.contactId)) {
        result.unknownContacts.push(digest.contactId);
        recordMailAudit(db, {
          at: now,
          action: 'mail-failed',
          alarmIds: [...new Set(alarmIds)],
          note: `not sent: contact "${digest.contactId}" is no longer in the configuration`,
        });
        deletePendingNotices(db, digest.notices.map((n) => n.id));
        continue;
      }
      // Read per digest: a thread started by the previous digest in this flush is then replied to.
      const alarms = new Map<number, NoticeAlarm>(loadNoticeAlarms(db, alarmIds).map((a) => [a.id, a]));
      const recipients = new Map<number, string[]>();
      for (const id of alarms.keys()) recipients.set(id, recipientsOf(db, id).map((r) => r.contactId));
      const message = composeNoticeMail(digest, { ...settings, now, alarms, recipients });
      enqueueOutbox(db, message, now);
      setAlarmThreadIds(
        db,
        // Stryker disable next-line MethodExpression,ConditionalExpression: the store sets a thread only where none is set; this only spares statements
        [...alarms.values()].filter((a) => a.threadMessageId === null).map((a) => a.id),
        message.messageId,
      );
      deletePendingNotices(db, digest.notices.map((n) => n.id));
      result.messageIds.push(message.messageId);
    }
    return result;
  });
  return run.immediate();
}
