import Database from 'better-sqlite3';
import type { Database as Db } from 'better-sqlite3';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { join } from 'node:path';
import type { AlarmRecord } from '../../../src/alarms/alarmTypes.js';
import { makeTempDir } from '../../helpers/tempDir.js';

const MIGRATIONS = fileURLToPath(new URL('../../../migrations/', import.meta.url));
// Only the schema this layer uses; other migrations belong to others and may be mid-edit.
const NOTIFY_MIGRATIONS = ['001_core.sql', '070_outbox_backlog.sql'];

export interface TestDb {
  db: Db;
  dir: string;
  file: string;
  /** Opens a second connection to the same file, as a restarted daemon would. */
  reopen(): Db;
  cleanup(): void;
}

/** A real SQLite file in a temp dir with the core schema applied. */
export function openTestDb(): TestDb {
  const { dir, cleanup: removeDir } = makeTempDir('pw-notify-');
  const file = join(dir, 'site.db');
  const db = new Database(file);
  db.pragma('journal_mode = WAL');
  db.pragma('foreign_keys = ON');
  for (const name of NOTIFY_MIGRATIONS) {
    db.exec(readFileSync(join(MIGRATIONS, name), 'utf8'));
  }
  const opened: Db[] = [db];
  return {
    db,
    dir,
    file,
    reopen() {
      const again = new Database(file);
      again.pragma('foreign_keys = ON');
      opened.push(again);
      return again;
    },
    cleanup() {
      for (const handle of opened) if (handle.open) handle.close();
      removeDir();
    },
  };
}

const iso = (ms: number | null) => (ms === null ? null : new Date(ms).toISOString());

/** Inserts an alarm row the way the alarm engine's store would; returns its id. */
export function insertAlarm(db: Db, alarm: Partial<AlarmRecord> & Pick<AlarmRecord, 'condition' | 'priority' | 'raisedAt'>): number {
  const row = {
    source: alarm.source ?? alarm.loopId ?? 'system',
    loop_id: alarm.loopId ?? null,
    condition: alarm.condition,
    priority: alarm.priority,
    state: alarm.state ?? 'unacknowledged',
    active: alarm.active === false ? 0 : 1,
    raised_at: iso(alarm.raisedAt),
    cleared_at: iso(alarm.clearedAt ?? null),
    acked_at: iso(alarm.ackedAt ?? null),
    acked_by: alarm.ackedBy ?? null,
    note: alarm.note ?? null,
    policy: alarm.policy ?? 'default',
  };
  const result = db
    .prepare(
      `INSERT INTO alarms (source, loop_id, condition, priority, state, active, raised_at, cleared_at, acked_at, acked_by, note, policy)
       VALUES (@source, @loop_id, @condition, @priority, @state, @active, @raised_at, @cleared_at, @acked_at, @acked_by, @note, @policy)`,
    )
    .run(row);
  return Number(result.lastInsertRowid);
}

/** Changes an alarm as the engine would on acknowledge / clear. */
export function updateAlarm(db: Db, id: number, fields: { state?: string; ackedAt?: number; ackedBy?: string; note?: string; clearedAt?: number; active?: boolean }): void {
  const sets: string[] = [];
  const values: unknown[] = [];
  if (fields.state !== undefined) (sets.push('state = ?'), values.push(fields.state));
  if (fields.ackedAt !== undefined) (sets.push('acked_at = ?'), values.push(iso(fields.ackedAt)));
  if (fields.ackedBy !== undefined) (sets.push('acked_by = ?'), values.push(fields.ackedBy));
  if (fields.note !== undefined) (sets.push('note = ?'), values.push(fields.note));
  if (fields.clearedAt !== undefined) (sets.push('cleared_at = ?'), values.push(iso(fields.clearedAt)));
  if (fields.active !== undefined) (sets.push('active = ?'), values.push(fields.active ? 1 : 0));
  db.prepare(`UPDATE alarms SET ${sets.join(', ')} WHERE id = ?`).run(...values, id);
}
