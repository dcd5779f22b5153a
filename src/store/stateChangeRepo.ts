import type { SqliteDatabase } from './openDatabase.js';
import { LOOP_STATES, type LoopState } from '../model/loopState.js';
import { checkRowValue } from './checkRowValue.js';
import { fromIso, toIso } from './isoTime.js';
import { rangeParams } from './rangeParams.js';

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
