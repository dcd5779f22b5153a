import type { Database, Statement } from 'better-sqlite3';

export interface AlarmRecipient {
  alarmId: number;
  contactId: string;
  firstQueuedAt: number;
}

interface RecipientStatements {
  insert: Statement;
  ofAlarm: Statement;
}
const cache = new WeakMap<Database, RecipientStatements>();

function statements(db: Database): RecipientStatements {
  let s = cache.get(db);
  if (!s) {
    s = {
      insert: db.prepare(
        'INSERT INTO alarm_recipients (alarm_id, contact_id, first_queued_at) VALUES (?, ?, ?) ON CONFLICT DO NOTHING',
      ),
      ofAlarm: db.prepare('SELECT alarm_id, contact_id, first_queued_at FROM alarm_recipients WHERE alarm_id = ? ORDER BY first_queued_at, contact_id'),
    };
    cache.set(db, s);
  }
  return s;
}

/** Records that a contact has been told about an alarm; the first time is kept. */
export function recordRecipient(db: Database, alarmId: number, contactId: string, at: number): void {
  statements(db).insert.run(alarmId, contactId, new Date(at).toISOString());
}

/** Who has been told about an alarm, first told first. */
export function recipientsOf(db: Database, alarmId: number): AlarmRecipient[] {
  const rows = statements(db).ofAlarm.all(alarmId) as Array<{ alarm_id: number; contact_id: string; first_queued_at: string }>;
  return rows.map((row) => ({ alarmId: row.alarm_id, contactId: row.contact_id, firstQueuedAt: Date.parse(row.first_queued_at) }));
}
