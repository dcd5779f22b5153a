import type { SqliteDatabase } from './openDatabase.js';
import { LOOP_STATES, type LoopState } from '../model/loopState.js';
import { checkRowValue } from './storeError.js';
import { fromIso, fromIsoOrNull, toIso } from './isoTime.js';

export interface LoopStatusRecord {
  loopId: string;
  state: LoopState;
  sinceMs: number;
  lastPulseAtMs: number | null;
  inService: boolean;
  serviceNote: string | null;
  serviceBy: string | null;
  serviceAtMs: number | null;
}

export interface LoopStatusRepo {
  /** Adds a row (state unknown, since `nowMs`) for each id not yet known; returns the ids added. */
  ensureLoops(ids: readonly string[], nowMs: number): string[];
  setState(loopId: string, state: LoopState, sinceMs: number): void;
  setLastPulse(loopId: string, atMs: number): void;
  setService(loopId: string, inService: boolean, note: string | null, by: string | null, atMs: number): void;
  all(): LoopStatusRecord[];
  get(loopId: string): LoopStatusRecord | null;
}

interface LoopStatusRow {
  loop_id: string;
  state: string;
  since_at: string;
  last_pulse_at: string | null;
  in_service: number;
  service_note: string | null;
  service_by: string | null;
  service_at: string | null;
}

export function createLoopStatusRepo(db: SqliteDatabase): LoopStatusRepo {
  const insertIfMissing = db.prepare("INSERT OR IGNORE INTO loop_status (loop_id, state, since_at) VALUES (?, 'unknown', ?)");
  const updateState = db.prepare('UPDATE loop_status SET state = ?, since_at = ? WHERE loop_id = ?');
  const updatePulse = db.prepare('UPDATE loop_status SET last_pulse_at = ? WHERE loop_id = ?');
  const updateService = db.prepare(
    'UPDATE loop_status SET in_service = ?, service_note = ?, service_by = ?, service_at = ? WHERE loop_id = ?',
  );
  const selectAll = db.prepare('SELECT * FROM loop_status ORDER BY loop_id');
  const selectOne = db.prepare('SELECT * FROM loop_status WHERE loop_id = ?');

  const toRecord = (row: LoopStatusRow): LoopStatusRecord => {
    const where = `loop_status[${row.loop_id}]`;
    return {
      loopId: row.loop_id,
      state: checkRowValue(row.state, LOOP_STATES, `${where}.state`),
      sinceMs: fromIso(row.since_at, `${where}.since_at`),
      lastPulseAtMs: fromIsoOrNull(row.last_pulse_at, `${where}.last_pulse_at`),
      inService: row.in_service !== 0,
      serviceNote: row.service_note,
      serviceBy: row.service_by,
      serviceAtMs: fromIsoOrNull(row.service_at, `${where}.service_at`),
    };
  };

  return {
    ensureLoops(ids, nowMs) {
      const since = toIso(nowMs);
      const added: string[] = [];
      db.transaction(() => {
        for (const id of ids) if (insertIfMissing.run(id, since).changes > 0) added.push(id);
      })();
      return added;
    },
    setState(loopId, state, sinceMs) {
      updateState.run(state, toIso(sinceMs), loopId);
    },
    setLastPulse(loopId, atMs) {
      updatePulse.run(toIso(atMs), loopId);
    },
    setService(loopId, inService, note, by, atMs) {
      updateService.run(inService ? 1 : 0, note, by, toIso(atMs), loopId);
    },
    all() {
      return (selectAll.all() as LoopStatusRow[]).map(toRecord);
    },
    get(loopId) {
      const row = selectOne.get(loopId) as LoopStatusRow | undefined;
      return row ? toRecord(row) : null;
    },
  };
}
