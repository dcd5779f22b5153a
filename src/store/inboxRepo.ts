import type { Database } from 'better-sqlite3';

/**
 * The reply inbox's place in the mailbox and what it decided about each message. Both are written in
 * the transaction that acts on a reply (acknowledgement, spent token, confirmation mail), so a crash
 * leaves either all of it or none: a reply is never handled twice, and never skipped.
 */
export interface InboxOffset {
  uidValidity: number;
  lastUid: number;
}

export interface InboxMessageRecord {
  messageKey: string;
  folder: string;
  uidValidity: number;
  uid: number;
  verdict: string;
  detail: string;
  handledAt: number;
  markedAt: number | null;
}

interface Row {
  message_key: string;
  folder: string;
  uid_validity: number;
  uid: number;
  verdict: string;
  detail: string;
  handled_at: string;
  marked_at: string | null;
}

const toRecord = (row: Row): InboxMessageRecord => ({
  messageKey: row.message_key,
  folder: row.folder,
  uidValidity: row.uid_validity,
  uid: row.uid,
  verdict: row.verdict,
  detail: row.detail,
  handledAt: Date.parse(row.handled_at),
  markedAt: row.marked_at === null ? null : Date.parse(row.marked_at),
});

export function inboxOffset(db: Database, folder: string): InboxOffset | null {
  const row = db.prepare('SELECT uid_validity, last_uid FROM inbox_offsets WHERE folder = ?').get(folder) as
    | { uid_validity: number; last_uid: number }
    | undefined;
  return row ? { uidValidity: row.uid_validity, lastUid: row.last_uid } : null;
}

/** Moves the offset forward only: a late, smaller UID never winds it back (unless UIDVALIDITY changed). */
export function advanceInboxOffset(db: Database, folder: string, offset: InboxOffset, at: number): void {
  db.prepare(
    `INSERT INTO inbox_offsets (folder, uid_validity, last_uid, updated_at) VALUES (?, ?, ?, ?)
     ON CONFLICT (folder) DO UPDATE SET
       last_uid = CASE WHEN uid_validity = excluded.uid_validity THEN max(last_uid, excluded.last_uid) ELSE excluded.last_uid END,
       uid_validity = excluded.uid_validity, updated_at = excluded.updated_at`,
  ).run(folder, offset.uidValidity, offset.lastUid, new Date(at).toISOString());
}

export function findInboxMessage(db: Database, messageKey: string): InboxMessageRecord | null {
  const row = db.prepare('SELECT * FROM inbox_messages WHERE message_key = ?').get(messageKey) as Row | undefined;
  return row ? toRecord(row) : null;
}

/** True when recorded now; false when the Message-ID was decided before (a duplicate). */
export function recordInboxMessage(db: Database, record: Omit<InboxMessageRecord, 'markedAt'>): boolean {
  return (
    db
      .prepare(
        `INSERT INTO inbox_messages (message_key, folder, uid_validity, uid, verdict, detail, handled_at)
         VALUES (?, ?, ?, ?, ?, ?, ?) ON CONFLICT (message_key) DO NOTHING`,
      )
      .run(record.messageKey, record.folder, record.uidValidity, record.uid, record.verdict, record.detail, new Date(record.handledAt).toISOString())
      .changes === 1
  );
}

export function markInboxMessage(db: Database, messageKey: string, at: number): void {
  db.prepare('UPDATE inbox_messages SET marked_at = ? WHERE message_key = ?').run(new Date(at).toISOString(), messageKey);
}

/** Decided but not yet flagged or moved in the mailbox (the process stopped in between). */
export function unmarkedInboxMessages(db: Database, folder: string): InboxMessageRecord[] {
  return (db.prepare('SELECT * FROM inbox_messages WHERE marked_at IS NULL AND folder = ? ORDER BY uid').all(folder) as Row[]).map(toRecord);
}
