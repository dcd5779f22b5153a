// Alarms: the alarm rows, who has been told about each one, and the single-use acknowledge tokens spent on them.
import type { SqliteDatabase } from './openDatabase.js';
import type { AlarmRecord, EscalationProgress } from '../alarms/alarmTypes.js';
import { ALARM_STATES, LISTED_ALARM_STATES } from '../model/alarmState.js';
import { CONDITIONS, PRIORITIES } from '../model/condition.js';
import { checkRowValue, StoreError } from './storeError.js';
import { fromIso, fromIsoOrNull, toIso, toIsoOrNull } from './isoTime.js';
import type { Database, Statement } from 'better-sqlite3';

export interface AlarmListQuery {
  /** active: the states still listed (unacknowledged, acknowledged, returned-unacknowledged, shelved). */
  status: 'active' | 'all';
  limit: number;
  /** Continue after this id in the listing order (newest first). */
  afterId?: number;
}

export interface AlarmRepo {
  /** Inserts or replaces the alarm's row; the mail thread id is kept (it has its own setter). */
  upsert(alarm: AlarmRecord): void;
  get(id: number): AlarmRecord | null;
  /** Alarms not yet closed, oldest first: what the alarm engine reloads at start. */
  listOpen(): AlarmRecord[];
  /** Newest first. */
  list(query: AlarmListQuery): AlarmRecord[];
  /** Highest id ever used (0 when none): the engine numbers new alarms from here. */
  maxId(): number;
  setThreadMessageId(id: number, messageId: string): void;
  threadMessageId(id: number): string | null;
}

interface AlarmRow {
  id: number;
  source: string;
  loop_id: string | null;
  condition: string;
  priority: string;
  state: string;
  active: number;
  latched: number;
  policy: string | null;
  raised_at: string;
  cleared_at: string | null;
  acked_at: string | null;
  acked_by: string | null;
  note: string | null;
  shelved_until: string | null;
  shelve_reason: string | null;
  closed_at: string | null;
  escalation_json: string;
  thread_message_id: string | null;
}

function parseEscalation(text: string, where: string): EscalationProgress {
  let value: unknown;
  try {
    value = JSON.parse(text);
  } catch {
    throw new StoreError('PW_STORE_BAD_ROW', `${where}: not JSON`);
  }
  const v = (value ?? {}) as Partial<EscalationProgress>;
  // '{}' is the column default: an alarm nobody has escalated yet.
  return {
    stepsDone: typeof v.stepsDone === 'number' ? v.stepsDone : 0,
    repeatsDone: typeof v.repeatsDone === 'number' ? v.repeatsDone : 0,
    nextAt: typeof v.nextAt === 'number' ? v.nextAt : null,
    notified: Array.isArray(v.notified) ? v.notified.filter((c): c is string => typeof c === 'string') : [],
  };
}

function toRecord(row: AlarmRow): AlarmRecord {
  const where = `alarms[${row.id}]`;
  return {
    id: row.id,
    source: row.source,
    loopId: row.loop_id,
    condition: checkRowValue(row.condition, CONDITIONS, `${where}.condition`),
    priority: checkRowValue(row.priority, PRIORITIES, `${where}.priority`),
    state: checkRowValue(row.state, ALARM_STATES, `${where}.state`),
    active: row.active !== 0,
    latched: row.latched !== 0,
    policy: row.policy,
    raisedAt: fromIso(row.raised_at, `${where}.raised_at`),
    clearedAt: fromIsoOrNull(row.cleared_at, `${where}.cleared_at`),
    ackedAt: fromIsoOrNull(row.acked_at, `${where}.acked_at`),
    ackedBy: row.acked_by,
    note: row.note,
    shelvedUntil: fromIsoOrNull(row.shelved_until, `${where}.shelved_until`),
    shelveReason: row.shelve_reason,
    closedAt: fromIsoOrNull(row.closed_at, `${where}.closed_at`),
    escalation: parseEscalation(row.escalation_json, `${where}.escalation_json`),
  };
}

export function createAlarmRepo(db: SqliteDatabase): AlarmRepo {
  const upsert = db.prepare(`
    INSERT INTO alarms (id, source, loop_id, condition, priority, state, active, latched, policy, raised_at, cleared_at,
                        acked_at, acked_by, note, shelved_until, shelve_reason, closed_at, escalation_json)
    VALUES (@id, @source, @loopId, @condition, @priority, @state, @active, @latched, @policy, @raisedAt, @clearedAt,
            @ackedAt, @ackedBy, @note, @shelvedUntil, @shelveReason, @closedAt, @escalationJson)
    ON CONFLICT (id) DO UPDATE SET
      source = excluded.source, loop_id = excluded.loop_id, condition = excluded.condition, priority = excluded.priority,
      state = excluded.state, active = excluded.active, latched = excluded.latched, policy = excluded.policy,
      raised_at = excluded.raised_at, cleared_at = excluded.cleared_at, acked_at = excluded.acked_at,
      acked_by = excluded.acked_by, note = excluded.note, shelved_until = excluded.shelved_until,
      shelve_reason = excluded.shelve_reason, closed_at = excluded.closed_at, escalation_json = excluded.escalation_json`);
  const get = db.prepare('SELECT * FROM alarms WHERE id = ?');
  const listOpen = db.prepare('SELECT * FROM alarms WHERE closed_at IS NULL ORDER BY id');
  const listedStates = LISTED_ALARM_STATES.map((s) => `'${s}'`).join(', ');
  const listActive = db.prepare(`SELECT * FROM alarms WHERE state IN (${listedStates}) AND id < ? ORDER BY id DESC LIMIT ?`);
  const listAll = db.prepare('SELECT * FROM alarms WHERE id < ? ORDER BY id DESC LIMIT ?');
  const maxId = db.prepare('SELECT coalesce(max(id), 0) FROM alarms').pluck();
  const setThread = db.prepare('UPDATE alarms SET thread_message_id = ? WHERE id = ?');
  const getThread = db.prepare('SELECT thread_message_id FROM alarms WHERE id = ?').pluck();

  return {
    upsert(alarm) {
      upsert.run({
        id: alarm.id,
        source: alarm.source,
        loopId: alarm.loopId,
        condition: alarm.condition,
        priority: alarm.priority,
        state: alarm.state,
        active: alarm.active ? 1 : 0,
        latched: alarm.latched ? 1 : 0,
        policy: alarm.policy,
        raisedAt: toIso(alarm.raisedAt),
        clearedAt: toIsoOrNull(alarm.clearedAt),
        ackedAt: toIsoOrNull(alarm.ackedAt),
        ackedBy: alarm.ackedBy,
        note: alarm.note,
        shelvedUntil: toIsoOrNull(alarm.shelvedUntil),
        shelveReason: alarm.shelveReason,
        closedAt: toIsoOrNull(alarm.closedAt),
        escalationJson: JSON.stringify(alarm.escalation),
      });
    },
    get(id) {
      const row = get.get(id) as AlarmRow | undefined;
      return row ? toRecord(row) : null;
    },
    listOpen() {
      return (listOpen.all() as AlarmRow[]).map(toRecord);
    },
    list(query) {
      const before = query.afterId ?? Number.MAX_SAFE_INTEGER;
      const statement = query.status === 'active' ? listActive : listAll;
      return (statement.all(before, query.limit) as AlarmRow[]).map(toRecord);
    },
    maxId() {
      return maxId.get() as number;
    },
    setThreadMessageId(id, messageId) {
      setThread.run(messageId, id);
    },
    threadMessageId(id) {
      return (getThread.get(id) as string | null | undefined) ?? null;
    },
  };
}

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

interface AckTokenStatements {
  insert: Statement;
  find: Statement;
}
const ackTokenCache = new WeakMap<Database, AckTokenStatements>();

function ackTokenStatements(db: Database): AckTokenStatements {
  let s = ackTokenCache.get(db);
  if (!s) {
    s = {
      insert: db.prepare('INSERT INTO used_ack_tokens (token_id, used_at) VALUES (?, ?) ON CONFLICT (token_id) DO NOTHING'),
      find: db.prepare('SELECT used_at FROM used_ack_tokens WHERE token_id = ?'),
    };
    ackTokenCache.set(db, s);
  }
  return s;
}

/** Spends a single-use token. True the first time; false when it was already used (a replayed link). */
export function markAckTokenUsed(db: Database, tokenId: string, at: number): boolean {
  return ackTokenStatements(db).insert.run(tokenId, new Date(at).toISOString()).changes === 1;
}

/** When the token was spent, or null: lets the confirmation page say "this link was already used" before any POST. */
export function ackTokenUsedAt(db: Database, tokenId: string): number | null {
  const row = ackTokenStatements(db).find.get(tokenId) as { used_at: string } | undefined;
  return row ? Date.parse(row.used_at) : null;
}
