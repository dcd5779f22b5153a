import type { SqliteDatabase } from './openDatabase.js';
import { AUDIT_ACTIONS, type AuditEntry } from '../alarms/alarmTypes.js';
import { checkRowValue } from './checkRowValue.js';
import { fromIso, toIso } from './isoTime.js';
import { rangeParams } from './rangeParams.js';

export interface AuditRecord extends AuditEntry {
  id: number;
}

export interface AuditListQuery {
  /** Rows naming the loop, or belonging to an alarm on that loop. */
  loopId?: string;
  since?: number;
  until?: number;
  limit: number;
  /** Continue after this id (ascending). */
  afterId?: number;
}

export interface AuditRepo {
  /** The alarm (if any) must already be in the alarms table: foreign keys are on. */
  insert(entry: AuditEntry): number;
  forAlarm(alarmId: number): AuditRecord[];
  list(query: AuditListQuery): AuditRecord[];
}

export interface AuditRow {
  id: number;
  at: string;
  actor: string;
  action: string;
  alarm_id: number | null;
  loop_id: string | null;
  note: string | null;
}

export function toAuditRecord(row: AuditRow): AuditRecord {
  const where = `audit[${row.id}]`;
  return {
    id: row.id,
    at: fromIso(row.at, `${where}.at`),
    actor: row.actor,
    action: checkRowValue(row.action, AUDIT_ACTIONS, `${where}.action`),
    alarmId: row.alarm_id,
    loopId: row.loop_id,
    note: row.note,
  };
}

export function createAuditRepo(db: SqliteDatabase): AuditRepo {
  const insert = db.prepare('INSERT INTO audit (at, actor, action, alarm_id, loop_id, note) VALUES (?, ?, ?, ?, ?, ?)');
  const forAlarm = db.prepare('SELECT * FROM audit WHERE alarm_id = ? ORDER BY at, id');
  const list = db.prepare(`
    SELECT a.* FROM audit a LEFT JOIN alarms al ON al.id = a.alarm_id
    WHERE (@loopId IS NULL OR a.loop_id = @loopId OR al.loop_id = @loopId)
      AND (@since IS NULL OR a.at >= @since)
      AND (@until IS NULL OR a.at < @until)
      AND a.id > @afterId
    ORDER BY a.id LIMIT @limit`);

  return {
    insert(entry) {
      return Number(insert.run(toIso(entry.at), entry.actor, entry.action, entry.alarmId, entry.loopId, entry.note).lastInsertRowid);
    },
    forAlarm(alarmId) {
      return (forAlarm.all(alarmId) as AuditRow[]).map(toAuditRecord);
    },
    list(query) {
      const rows = list.all(rangeParams(query)) as AuditRow[];
      return rows.map(toAuditRecord);
    },
  };
}
