import type { Database, Statement } from 'better-sqlite3';
import type { Priority } from '../model/condition.js';
import type { AuditAction } from '../alarms/alarmTypes.js';
import type { OutboxKind, OutboxMessage } from '../model/outboxMessage.js';

/** One outbox row as plain data. Times are epoch ms; the columns hold ISO 8601 UTC text. */
export interface OutboxRow extends OutboxMessage {
  id: number;
  createdAt: number;
  /** 'dropped': a reminder made obsolete before it could go (audited as mail-dropped); kept, never deleted. */
  status: 'pending' | 'sent' | 'dropped';
  attempts: number;
  nextAttemptAt: number;
  lastError: string | null;
  sentAt: number | null;
  reminder: boolean;
  /** The server refused this message on its last attempt: it backs off on its own and holds no other mail back. */
  refused: boolean;
}

interface OutboxColumns {
  id: number;
  message_id: string;
  kind: string;
  priority: string | null;
  recipients_json: string;
  subject: string;
  text_body: string;
  html_body: string;
  headers_json: string;
  alarm_ids_json: string;
  created_at: string;
  status: string;
  attempts: number;
  next_attempt_at: string;
  last_error: string | null;
  sent_at: string | null;
  reminder: number;
  refused: number;
}

// The schema has no sender column; the From address travels inside headers_json under this key.
const FROM_KEY = 'From';

const iso = (ms: number) => new Date(ms).toISOString();
const epoch = (text: string) => Date.parse(text);

interface OutboxStatements {
  insert: Statement;
  byMessageId: Statement;
  byId: Statement;
  due: Statement;
  markSent: Statement;
  markFailed: Statement;
  defer: Statement;
  nextDue: Statement;
  pendingCount: Statement;
  audit: Statement;
  release: Statement;
  markDropped: Statement;
}
const cache = new WeakMap<Database, OutboxStatements>();

function statements(db: Database): OutboxStatements {
  let s = cache.get(db);
  if (!s) {
    s = {
      insert: db.prepare(
        `INSERT INTO outbox (message_id, kind, priority, recipients_json, subject, text_body, html_body, headers_json,
           alarm_ids_json, created_at, status, attempts, next_attempt_at, reminder)
         VALUES (@messageId, @kind, @priority, @recipients, @subject, @text, @html, @headers, @alarmIds, @createdAt,
           'pending', 0, @createdAt, @reminder)`,
      ),
      byMessageId: db.prepare('SELECT * FROM outbox WHERE message_id = ?'),
      byId: db.prepare('SELECT * FROM outbox WHERE id = ?'),
      // In the order queued; a row never goes past an earlier row to one of its mailboxes that is still
      // held back by a link failure, so each person reads their mail in the order it was raised ("back
      // to normal" never before its alarm). A row the server refused holds nothing back: it may never go.
      // Mailboxes compare as written in recipients_json, which is how one contact is always written.
      // held: per mailbox, the first row a link failure holds back (computed once per query, not per row).
      due: db.prepare(
        `WITH held AS MATERIALIZED (
           SELECT m.value AS mailbox, MIN(e.id) AS first_id FROM outbox e, json_each(e.recipients_json) m
           WHERE e.status = 'pending' AND e.refused = 0 AND e.next_attempt_at > @now GROUP BY m.value)
         SELECT o.* FROM outbox o WHERE o.status = 'pending' AND o.next_attempt_at <= @now
           AND NOT EXISTS (SELECT 1 FROM json_each(o.recipients_json) r JOIN held h ON h.mailbox = r.value WHERE h.first_id < o.id)
         ORDER BY o.id LIMIT @limit`,
      ),
      markSent: db.prepare(
        `UPDATE outbox SET status = 'sent', sent_at = ?, attempts = attempts + 1, last_error = NULL, refused = 0 WHERE id = ? AND status = 'pending'`,
      ),
      markFailed: db.prepare(
        `UPDATE outbox SET attempts = attempts + 1, next_attempt_at = ?, last_error = ?, refused = ? WHERE id = ? AND status = 'pending'`,
      ),
      defer: db.prepare(
        `UPDATE outbox SET next_attempt_at = ? WHERE id = ? AND status = 'pending' AND next_attempt_at < ?`,
      ),
      nextDue: db.prepare(`SELECT MIN(next_attempt_at) AS at FROM outbox WHERE status = 'pending'`),
      pendingCount: db.prepare(`SELECT COUNT(*) AS n, MIN(created_at) AS oldest FROM outbox WHERE status = 'pending'`),
      audit: db.prepare(
        `INSERT INTO audit (at, actor, action, alarm_id, loop_id, note) VALUES (?, 'system', ?, ?, NULL, ?)`,
      ),
      release: db.prepare(
        `UPDATE outbox SET next_attempt_at = @now WHERE status = 'pending' AND refused = 0 AND next_attempt_at > @now`,
      ),
      markDropped: db.prepare(`UPDATE outbox SET status = 'dropped', last_error = ? WHERE id = ? AND status = 'pending'`),
    };
    cache.set(db, s);
  }
  return s;
}

function fromColumns(row: OutboxColumns): OutboxRow {
  const headers = JSON.parse(row.headers_json) as Record<string, string>;
  const from = headers[FROM_KEY] ?? '';
  delete headers[FROM_KEY];
  return {
    id: row.id,
    messageId: row.message_id,
    kind: row.kind as OutboxKind,
    priority: row.priority as Priority | null,
    from,
    to: JSON.parse(row.recipients_json) as string[],
    subject: row.subject,
    text: row.text_body,
    html: row.html_body,
    headers,
    alarmIds: JSON.parse(row.alarm_ids_json) as number[],
    createdAt: epoch(row.created_at),
    status: row.status as OutboxRow['status'],
    attempts: row.attempts,
    nextAttemptAt: epoch(row.next_attempt_at),
    lastError: row.last_error,
    sentAt: row.sent_at === null ? null : epoch(row.sent_at),
    reminder: row.reminder === 1,
    refused: row.refused === 1,
  };
}

/**
 * Adds a message, due at once; returns the row id. A Message-ID already in the outbox is an error
 * (SQLite UNIQUE constraint), never a silent skip: two different mails must not share one id.
 */
export function enqueueOutbox(db: Database, message: OutboxMessage, now: number): number {
  const s = statements(db);
  const result = s.insert.run({
    messageId: message.messageId,
    kind: message.kind,
    priority: message.priority,
    recipients: JSON.stringify(message.to),
    subject: message.subject,
    text: message.text,
    html: message.html,
    headers: JSON.stringify({ ...message.headers, [FROM_KEY]: message.from }),
    alarmIds: JSON.stringify(message.alarmIds),
    createdAt: iso(now),
    reminder: message.reminder === true ? 1 : 0,
  });
  return Number(result.lastInsertRowid);
}

export function getOutboxRow(db: Database, id: number): OutboxRow | null {
  const row = statements(db).byId.get(id) as OutboxColumns | undefined;
  return row ? fromColumns(row) : null;
}

export function getOutboxRowByMessageId(db: Database, messageId: string): OutboxRow | null {
  const row = statements(db).byMessageId.get(messageId) as OutboxColumns | undefined;
  return row ? fromColumns(row) : null;
}

/**
 * Pending rows whose attempt is due, in the order queued, leaving out any row behind an earlier one to
 * the same mailbox that a link failure still holds back.
 */
export function dueOutbox(db: Database, now: number, limit = 100): OutboxRow[] {
  return (statements(db).due.all({ now: iso(now), limit }) as OutboxColumns[]).map(fromColumns);
}

/**
 * The server takes mail again: every row held back by a link failure is due at `now` instead of after
 * its own back-off. Rows the server refused keep theirs. Returns how many rows were released.
 */
export function releaseHeldOutbox(db: Database, now: number): number {
  return statements(db).release.run({ now: iso(now) }).changes;
}

/** A pending row that will never be sent (an obsolete reminder); `reason` is kept in last_error. The caller audits it. */
export function markOutboxDropped(db: Database, id: number, reason: string): void {
  statements(db).markDropped.run(reason.slice(0, 1000), id);
}

export function markOutboxSent(db: Database, id: number, at: number): void {
  statements(db).markSent.run(iso(at), id);
}

/** `refused`: the server refused this message (not the link), so the row holds no later mail back. */
export function markOutboxFailed(db: Database, id: number, nextAttemptAt: number, error: string, refused = false): void {
  statements(db).markFailed.run(iso(nextAttemptAt), error.slice(0, 1000), refused ? 1 : 0, id);
}

/** Moves a row's next attempt out to `until` (never earlier than it already is); the attempt count stays. */
export function deferOutbox(db: Database, id: number, until: number): void {
  const at = iso(until);
  statements(db).defer.run(at, id, at);
}

export function nextOutboxDueAt(db: Database): number | null {
  const row = statements(db).nextDue.get() as { at: string | null };
  return row.at === null ? null : epoch(row.at);
}

/** How much mail waits, and since when: for /healthz, /metrics and the daily report. */
export function outboxBacklog(db: Database): { pending: number; oldestCreatedAt: number | null } {
  const row = statements(db).pendingCount.get() as { n: number; oldest: string | null };
  return { pending: row.n, oldestCreatedAt: row.oldest === null ? null : epoch(row.oldest) };
}

/** Audit row for a mail attempt; one per alarm the mail is about, or one without alarm for other mail. */
export function recordMailAudit(
  db: Database,
  entry: { at: number; action: Extract<AuditAction, 'mail-sent' | 'mail-failed' | 'mail-dropped'>; alarmIds: readonly number[]; note: string },
): void {
  const s = statements(db);
  const at = iso(entry.at);
  if (entry.alarmIds.length === 0) s.audit.run(at, entry.action, null, entry.note);
  for (const alarmId of entry.alarmIds) s.audit.run(at, entry.action, alarmId, entry.note);
}
