import type { Database, Statement } from 'better-sqlite3';
import type { NoticeKind } from '../alarms/alarmTypes.js';
import type { NoticeAlarm, PendingNotice } from '../alarms/noticeTypes.js';
import { createAlarmRepo } from './alarmRepo.js';

const iso = (ms: number) => new Date(ms).toISOString();
const epoch = (text: string) => Date.parse(text);

interface NoticeColumns {
  id: number;
  contact_id: string;
  alarm_id: number | null;
  kind: string;
  created_at: string;
  due_at: string;
  detail_json: string;
}

interface NoticeStatements {
  insert: Statement;
  contactDue: Statement;
  all: Statement;
  remove: Statement;
  nextDue: Statement;
  setThread: Statement;
}
const cache = new WeakMap<Database, NoticeStatements>();

function statements(db: Database): NoticeStatements {
  let s = cache.get(db);
  if (!s) {
    s = {
      insert: db.prepare(
        `INSERT INTO pending_notices (contact_id, alarm_id, kind, created_at, due_at, detail_json) VALUES (?, ?, ?, ?, ?, ?)`,
      ),
      contactDue: db.prepare('SELECT MIN(due_at) AS at FROM pending_notices WHERE contact_id = ?'),
      all: db.prepare('SELECT * FROM pending_notices ORDER BY due_at, id'),
      remove: db.prepare('DELETE FROM pending_notices WHERE id = ?'),
      nextDue: db.prepare('SELECT MIN(due_at) AS at FROM pending_notices'),
      setThread: db.prepare('UPDATE alarms SET thread_message_id = ? WHERE id = ? AND thread_message_id IS NULL'),
    };
    cache.set(db, s);
  }
  return s;
}

export function insertPendingNotice(db: Database, notice: Omit<PendingNotice, 'id'>): number {
  const detail = JSON.stringify({ actor: notice.actor, note: notice.note });
  const result = statements(db).insert.run(notice.contactId, notice.alarmId, notice.kind, iso(notice.createdAt), iso(notice.dueAt), detail);
  return Number(result.lastInsertRowid);
}

/** When the contact's open grouping window closes; null when nothing waits for them. */
export function contactWindowDueAt(db: Database, contactId: string): number | null {
  const row = statements(db).contactDue.get(contactId) as { at: string | null };
  return row.at === null ? null : epoch(row.at);
}

export function listPendingNotices(db: Database): PendingNotice[] {
  return (statements(db).all.all() as NoticeColumns[]).map((row) => {
    const detail = JSON.parse(row.detail_json) as { actor?: string | null; note?: string | null };
    return {
      id: row.id,
      contactId: row.contact_id,
      alarmId: row.alarm_id,
      kind: row.kind as NoticeKind,
      createdAt: epoch(row.created_at),
      dueAt: epoch(row.due_at),
      actor: detail.actor ?? null,
      note: detail.note ?? null,
    };
  });
}

export function deletePendingNotices(db: Database, ids: readonly number[]): void {
  const s = statements(db);
  for (const id of ids) s.remove.run(id);
}

export function nextPendingNoticeDueAt(db: Database): number | null {
  const row = statements(db).nextDue.get() as { at: string | null };
  return row.at === null ? null : epoch(row.at);
}

/** The alarm fields a notice mail shows; alarms not on record are left out. Read through the alarm repo, so the row mapping lives in one place. */
export function loadNoticeAlarms(db: Database, alarmIds: readonly number[]): NoticeAlarm[] {
  const alarmRepo = createAlarmRepo(db);
  const alarms: NoticeAlarm[] = [];
  for (const id of new Set(alarmIds)) {
    const alarm = alarmRepo.get(id);
    if (!alarm) continue;
    alarms.push({
      id: alarm.id,
      source: alarm.source,
      loopId: alarm.loopId,
      condition: alarm.condition,
      priority: alarm.priority,
      state: alarm.state,
      active: alarm.active,
      raisedAt: alarm.raisedAt,
      clearedAt: alarm.clearedAt,
      ackedAt: alarm.ackedAt,
      ackedBy: alarm.ackedBy,
      note: alarm.note,
      shelvedUntil: alarm.shelvedUntil,
      shelveReason: alarm.shelveReason,
      threadMessageId: alarmRepo.threadMessageId(alarm.id),
    });
  }
  return alarms;
}

/** The first mail about an alarm becomes its thread; later calls leave an existing thread id alone. */
export function setAlarmThreadIds(db: Database, alarmIds: readonly number[], messageId: string): void {
  const s = statements(db);
  for (const id of alarmIds) s.setThread.run(messageId, id);
}
