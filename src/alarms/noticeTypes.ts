import type { AlarmRecord, NoticeKind } from './alarmTypes.js';

/** A notice waiting out its contact's grouping window (a pending_notices row). Times: epoch ms. */
export interface PendingNotice {
  id: number;
  contactId: string;
  alarmId: number | null;
  kind: NoticeKind;
  createdAt: number;
  /** When the contact's window closes; every notice of one contact shares the earliest. */
  dueAt: number;
  /** Who acted (for acknowledged, shelved …) and their note, as the alarm engine gave them. */
  actor: string | null;
  note: string | null;
}

/** Everything one contact is to be told in one mail. */
export interface Digest {
  contactId: string;
  dueAt: number;
  /** In the order they were queued. */
  notices: PendingNotice[];
}

/** What a notice mail needs to know about an alarm, read when the mail is composed (so it shows the latest state). */
export type NoticeAlarm = Pick<
  AlarmRecord,
  | 'id'
  | 'source'
  | 'loopId'
  | 'condition'
  | 'priority'
  | 'state'
  | 'active'
  | 'raisedAt'
  | 'clearedAt'
  | 'ackedAt'
  | 'ackedBy'
  | 'note'
  | 'shelvedUntil'
  | 'shelveReason'
> & {
  /** Message-ID of the first mail about this alarm; later mails reply to it. */
  threadMessageId: string | null;
};
