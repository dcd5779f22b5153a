import type { Database, Statement } from 'better-sqlite3';
import type { EventDraft } from './alarmEvents.js';
import type { EventPayload } from './sitePayloads.js';

/**
 * The durable queue of alarm events for the broker (table mqtt_outbox). Rows are added inside the
 * caller's transaction — the one that commits the alarm change — and are only ever marked sent, in
 * event-number order, so a broker outage loses nothing and a restart finds the rest again.
 */
interface Statements { insert: Statement; pending: Statement; markSent: Statement; last: Statement; prune: Statement; pendingCount: Statement }
const cache = new WeakMap<Database, Statements>();

function statements(db: Database): Statements {
  let s = cache.get(db);
  if (!s) {
    s = {
      insert: db.prepare('INSERT INTO mqtt_outbox (payload_json, created_at) VALUES (?, ?)'),
      pending: db.prepare('SELECT event_no, payload_json FROM mqtt_outbox WHERE sent_at IS NULL ORDER BY event_no LIMIT ?'),
      markSent: db.prepare('UPDATE mqtt_outbox SET sent_at = ? WHERE event_no <= ? AND sent_at IS NULL'),
      last: db.prepare("SELECT seq FROM sqlite_sequence WHERE name = 'mqtt_outbox'"),
      prune: db.prepare('DELETE FROM mqtt_outbox WHERE sent_at IS NOT NULL AND sent_at < ?'),
      pendingCount: db.prepare('SELECT COUNT(*) AS n FROM mqtt_outbox WHERE sent_at IS NULL'),
    };
    cache.set(db, s);
  }
  return s;
}

/** Queues events; returns their event numbers. Call inside the transaction that commits the alarm change. */
export function enqueueAlarmEvents(db: Database, drafts: readonly EventDraft[], now: number): number[] {
  const s = statements(db);
  const at = new Date(now).toISOString();
  return drafts.map((draft) => Number(s.insert.run(JSON.stringify(draft), at).lastInsertRowid));
}

/** The oldest unsent events, in order, with their numbers filled in. */
export function pendingAlarmEvents(db: Database, limit: number): EventPayload[] {
  const rows = statements(db).pending.all(limit) as Array<{ event_no: number; payload_json: string }>;
  return rows.map((row) => ({ eventNo: row.event_no, ...(JSON.parse(row.payload_json) as EventDraft) }));
}

/** Marks every event up to and including `eventNo` sent (the broker acknowledged them in order). */
export function markAlarmEventsSent(db: Database, eventNo: number, now: number): void {
  statements(db).markSent.run(new Date(now).toISOString(), eventNo);
}

/** The last event number handed out; null before the first event. */
export function lastAlarmEventNo(db: Database): number | null {
  const row = statements(db).last.get() as { seq: number } | undefined;
  return row ? row.seq : null;
}

export function pendingAlarmEventCount(db: Database): number {
  return (statements(db).pendingCount.get() as { n: number }).n;
}

/** Sent rows older than `before` go; the numbering carries on (AUTOINCREMENT never reuses one). */
export function pruneSentAlarmEvents(db: Database, before: number): void {
  statements(db).prune.run(new Date(before).toISOString());
}
