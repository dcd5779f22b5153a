// History: the audit trail of operator actions, loop state changes, and the combined event list read from both.
import type { SqliteDatabase } from './openDatabase.js';
import { AUDIT_ACTIONS, type AuditEntry, type AuditAction } from '../alarms/alarmTypes.js';
import { checkRowValue, StoreError } from './storeError.js';
import { fromIso, toIso, rangeParams } from './isoTime.js';
import { LOOP_STATES, type LoopState } from '../model/loopState.js';
import { CONDITION_PRIORITY, CONDITIONS, PRIORITIES, type Condition, type Priority } from '../model/condition.js';

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

export interface NewStateChange {
  loopId: string;
  from: LoopState;
  to: LoopState;
  /** Unwrapped decoder time of the change; null when decided on host time (offline). */
  decoderUs: number | null;
  /** Host time, epoch ms. */
  at: number;
  reason: string;
}

export interface StateChangeRecord extends NewStateChange {
  id: number;
}

export interface StateChangeListQuery {
  loopId?: string;
  /** Inclusive, epoch ms. */
  since?: number;
  /** Exclusive, epoch ms. */
  until?: number;
  limit: number;
  /** Continue after this id (ascending id order). */
  afterId?: number;
}

export interface StateChangeRepo {
  insert(change: NewStateChange): number;
  list(query: StateChangeListQuery): StateChangeRecord[];
  /** The last change of a loop before `beforeMs`: the state a timeline starts in. */
  latestBefore(loopId: string, beforeMs: number): StateChangeRecord | null;
}

interface StateChangeRow {
  id: number;
  loop_id: string;
  from_state: string;
  to_state: string;
  decoder_us: number | bigint | null;
  at: string;
  reason: string;
}

export function toStateChangeRecord(row: StateChangeRow): StateChangeRecord {
  const where = `state_changes[${row.id}]`;
  return {
    id: row.id,
    loopId: row.loop_id,
    from: checkRowValue(row.from_state, LOOP_STATES, `${where}.from_state`),
    to: checkRowValue(row.to_state, LOOP_STATES, `${where}.to_state`),
    decoderUs: row.decoder_us === null ? null : Number(row.decoder_us),
    at: fromIso(row.at, `${where}.at`),
    reason: row.reason,
  };
}

export function createStateChangeRepo(db: SqliteDatabase): StateChangeRepo {
  const insert = db.prepare(
    'INSERT INTO state_changes (loop_id, from_state, to_state, decoder_us, at, reason) VALUES (?, ?, ?, ?, ?, ?)',
  );
  const list = db.prepare(`
    SELECT * FROM state_changes
    WHERE (@loopId IS NULL OR loop_id = @loopId)
      AND (@since IS NULL OR at >= @since)
      AND (@until IS NULL OR at < @until)
      AND id > @afterId
    ORDER BY id LIMIT @limit`);
  const latestBefore = db.prepare('SELECT * FROM state_changes WHERE loop_id = ? AND at < ? ORDER BY at DESC, id DESC LIMIT 1');

  return {
    insert(change) {
      const info = insert.run(change.loopId, change.from, change.to, change.decoderUs, toIso(change.at), change.reason);
      return Number(info.lastInsertRowid);
    },
    list(query) {
      const rows = list.all(rangeParams(query)) as StateChangeRow[];
      return rows.map(toStateChangeRecord);
    },
    latestBefore(loopId, beforeMs) {
      const row = latestBefore.get(loopId, toIso(beforeMs)) as StateChangeRow | undefined;
      return row ? toStateChangeRecord(row) : null;
    },
  };
}

/** One entry of the history timeline: a loop's state change or an audit row (who did what). */
export interface TimelineEvent {
  /** Stable: `sc-<id>` or `au-<id>`. */
  id: string;
  atMs: number;
  loopId: string | null;
  kind: 'state-change' | 'audit';
  /** Of the fault entered or left (state changes) or of the alarm acted on (audit); null for neither. */
  priority: Priority | null;
  summary: string;
  actor: string | null;
  fromState: LoopState | null;
  toState: LoopState | null;
  alarmId: number | null;
  action: AuditAction | null;
  /** The audit row's own note and the condition of its alarm (null for state changes), for pages that word rows themselves. */
  note: string | null;
  condition: Condition | null;
}

export interface TimelineQuery {
  loopId?: string;
  priority?: Priority;
  /** Inclusive. */
  sinceMs?: number;
  /** Exclusive. */
  untilMs?: number;
  /** From a previous page's nextCursor. */
  cursor?: string;
  limit: number;
}

export interface TimelinePage {
  /** Newest first. */
  items: TimelineEvent[];
  /** null on the last page. */
  nextCursor: string | null;
}

export interface EventsQuery {
  /** Throws StoreError PW_STORE_BAD_CURSOR for a cursor this store did not hand out. */
  list(query: TimelineQuery): TimelinePage;
}

export const MAX_TIMELINE_PAGE = 500;

// Order within one instant: audit rows above the state change that caused them (newest first).
const RANK = { 'state-change': 0, audit: 1 } as const;

interface Position {
  at: string;
  rank: number;
  id: number;
}

export function encodeCursor(position: Position): string {
  // Stryker disable next-line StringLiteral: utf8 is Buffer.from's default encoding
  return Buffer.from(`${position.at}|${position.rank}|${position.id}`, 'utf8').toString('base64url');
}

export function decodeCursor(cursor: string): Position {
  const text = Buffer.from(cursor, 'base64url').toString('utf8');
  const match = /^(\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{3}Z)\|([01])\|(\d{1,15})$/.exec(text);
  if (!match?.[1] || !match[2] || !match[3]) {
    throw new StoreError('PW_STORE_BAD_CURSOR', 'cursor: not a cursor from a previous page of this list');
  }
  return { at: match[1], rank: Number(match[2]), id: Number(match[3]) };
}

/** A state change carries the priority of the fault state it enters, or else of the one it leaves. */
function statePriorityCase(column: string): string {
  const arms = LOOP_STATES.filter((s): s is LoopState & Condition => s in CONDITION_PRIORITY)
    .map((s) => `WHEN '${s}' THEN '${CONDITION_PRIORITY[s]}'`)
    // Stryker disable next-line StringLiteral: SQLite needs no space between a quoted string and the next keyword
    .join(' ');
  return `CASE ${column} ${arms} END`;
}

interface StateRow {
  id: number;
  loop_id: string;
  from_state: string;
  to_state: string;
  at: string;
  reason: string;
  priority: string | null;
}

interface AuditJoinRow {
  id: number;
  at: string;
  actor: string;
  action: string;
  alarm_id: number | null;
  loop_id: string | null;
  note: string | null;
  priority: string | null;
  condition: string | null;
}

const AFTER_CURSOR = '(at < @cAt OR (at = @cAt AND @rank < @cRank) OR (at = @cAt AND @rank = @cRank AND id < @cId))';

export function createEventsQuery(db: SqliteDatabase): EventsQuery {
  const stateChanges = db.prepare(`
    SELECT * FROM (
      SELECT id, loop_id, from_state, to_state, at, reason,
             coalesce(${statePriorityCase('to_state')}, ${statePriorityCase('from_state')}) AS priority
      FROM state_changes
      WHERE (@loopId IS NULL OR loop_id = @loopId) AND (@since IS NULL OR at >= @since) AND (@until IS NULL OR at < @until)
    )
    WHERE (@priority IS NULL OR priority = @priority) AND ${AFTER_CURSOR}
    ORDER BY at DESC, id DESC LIMIT @limit`);
  const audit = db.prepare(`
    SELECT * FROM (
      SELECT a.id, a.at, a.actor, a.action, a.alarm_id, coalesce(a.loop_id, al.loop_id) AS loop_id, a.note,
             al.priority, al.condition
      FROM audit a LEFT JOIN alarms al ON al.id = a.alarm_id
      WHERE (@since IS NULL OR a.at >= @since) AND (@until IS NULL OR a.at < @until)
    )
    WHERE (@loopId IS NULL OR loop_id = @loopId) AND (@priority IS NULL OR priority = @priority) AND ${AFTER_CURSOR}
    ORDER BY at DESC, id DESC LIMIT @limit`);

  const fromStateRow = (row: StateRow): TimelineEvent & { position: Position } => {
    const where = `state_changes[${row.id}]`;
    const from = checkRowValue(row.from_state, LOOP_STATES, `${where}.from_state`);
    const to = checkRowValue(row.to_state, LOOP_STATES, `${where}.to_state`);
    return {
      id: `sc-${row.id}`,
      atMs: fromIso(row.at, `${where}.at`),
      loopId: row.loop_id,
      kind: 'state-change',
      priority: row.priority === null ? null : checkRowValue(row.priority, PRIORITIES, `${where}.priority`),
      summary: `${from} → ${to}: ${row.reason}`,
      actor: null,
      fromState: from,
      toState: to,
      alarmId: null,
      action: null,
      note: null,
      condition: null,
      position: { at: row.at, rank: RANK['state-change'], id: row.id },
    };
  };

  const fromAuditRow = (row: AuditJoinRow): TimelineEvent & { position: Position } => {
    const where = `audit[${row.id}]`;
    const action = checkRowValue(row.action, AUDIT_ACTIONS, `${where}.action`);
    return {
      id: `au-${row.id}`,
      atMs: fromIso(row.at, `${where}.at`),
      loopId: row.loop_id,
      kind: 'audit',
      priority: row.priority === null ? null : checkRowValue(row.priority, PRIORITIES, `${where}.priority`),
      summary: `${action}${row.condition ? ` ${row.condition}` : ''}${row.note ? ` — ${row.note}` : ''}`,
      actor: row.actor,
      fromState: null,
      toState: null,
      alarmId: row.alarm_id,
      action,
      note: row.note,
      condition: row.condition === null ? null : checkRowValue(row.condition, CONDITIONS, `${where}.condition`),
      position: { at: row.at, rank: RANK.audit, id: row.id },
    };
  };

  return {
    list(query) {
      const limit = Math.max(1, Math.min(MAX_TIMELINE_PAGE, Math.floor(query.limit)));
      // '~' sorts after every ISO time: no cursor means "from the newest".
      const cursor = query.cursor ? decodeCursor(query.cursor) : { at: '~', rank: 9, id: 0 };
      const params = {
        loopId: query.loopId ?? null,
        priority: query.priority ?? null,
        since: query.sinceMs === undefined ? null : toIso(query.sinceMs),
        until: query.untilMs === undefined ? null : toIso(query.untilMs),
        cAt: cursor.at,
        cRank: cursor.rank,
        cId: cursor.id,
        limit: limit + 1,
      };
      const merged = [
        ...(stateChanges.all({ ...params, rank: RANK['state-change'] }) as StateRow[]).map(fromStateRow),
        ...(audit.all({ ...params, rank: RANK.audit }) as AuditJoinRow[]).map(fromAuditRow),
      ].sort((a, b) =>
        a.position.at !== b.position.at
          ? (a.position.at < b.position.at ? 1 : -1)
          : b.position.rank - a.position.rank || b.position.id - a.position.id,
      );
      const page = merged.slice(0, limit);
      const last = page[page.length - 1];
      return {
        items: page.map(({ position: _position, ...event }) => event),
        nextCursor: merged.length > limit && last ? encodeCursor(last.position) : null,
      };
    },
  };
}
