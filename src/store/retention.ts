// Retention: how long raw edges, line-quality buckets and history are kept, and the pruning that enforces it.
import type { SiteConfig } from '../config/schema.js';
import type { Store } from './openStore.js';
import { databaseSize } from './openDatabase.js';
import { HOUR_MS, floorTo, toIso } from './isoTime.js';
import { ADD_TO_EXISTING_BUCKET } from './lineQualityRepo.js';

export type RetentionSettings = Pick<SiteConfig['storage']['retention'], 'edges' | 'minute_quality' | 'hourly_quality'>;

export interface RetentionReport {
  edgesDeleted: number;
  minuteRowsFolded: number;
  hourRowsWritten: number;
  hourRowsDeleted: number;
  counterMarksDeleted: number;
  bytesBefore: number;
  bytesAfter: number;
}

export const RETENTION_LAST_RUN_KEY = 'store.retention.last_run';

/**
 * Applies the retention settings: raw edges go after `edges`; per-minute line quality older than
 * `minute_quality` is folded into hourly rows (sums, so mean and jitter stay computable); hourly rows
 * go after `hourly_quality`. State changes, alarms and the audit trail are never deleted. Finally the
 * freed pages are given back to the disk (incremental vacuum).
 */
export function applyRetention(store: Store, retention: RetentionSettings, nowMs: number): RetentionReport {
  const { db } = store;
  const bytesBefore = databaseSize(db).bytes;

  const edgesDeleted = pruneEdges(store, retention.edges, nowMs);

  // Fold whole hours only, so an hour is never half minutes and half an hour row.
  const foldBefore = toIso(floorTo(nowMs - retention.minute_quality, HOUR_MS));
  const hourStart = "strftime('%Y-%m-%dT%H:00:00.000Z', bucket_at)";
  const folded = store.transaction(() => {
    const hourRowsWritten = db
      .prepare(
        `INSERT INTO line_quality (loop_id, resolution, bucket_at, pulses, interval_count, interval_sum_ms,
                                   interval_sq_sum_ms, out_of_tolerance, glitches, long_pulses, lost_frames)
         SELECT loop_id, 'hour', ${hourStart}, sum(pulses), sum(interval_count), sum(interval_sum_ms),
                sum(interval_sq_sum_ms), sum(out_of_tolerance), sum(glitches), sum(long_pulses), sum(lost_frames)
         FROM line_quality WHERE resolution = 'minute' AND bucket_at < ?
         GROUP BY loop_id, ${hourStart}
         ${ADD_TO_EXISTING_BUCKET}`,
      )
      .run(foldBefore).changes;
    const minuteRowsFolded = db
      .prepare("DELETE FROM line_quality WHERE resolution = 'minute' AND bucket_at < ?")
      .run(foldBefore).changes;
    const hourRowsDeleted = db
      .prepare("DELETE FROM line_quality WHERE resolution = 'hour' AND bucket_at < ?")
      .run(toIso(nowMs - retention.hourly_quality)).changes;
    // Counter snapshots only serve "the last 24 h" figures; a month covers any report window.
    const counterMarksDeleted = db
      .prepare('DELETE FROM decoder_counter_marks WHERE hour_at < ?')
      .run(toIso(nowMs - 31 * 24 * HOUR_MS)).changes;
    store.kv.set(RETENTION_LAST_RUN_KEY, toIso(nowMs));
    return { hourRowsWritten, minuteRowsFolded, hourRowsDeleted, counterMarksDeleted };
  });

  db.pragma('incremental_vacuum');
  // In WAL mode the file only shrinks at a checkpoint; TRUNCATE also empties the WAL.
  db.pragma('wal_checkpoint(TRUNCATE)');

  return { edgesDeleted, ...folded, bytesBefore, bytesAfter: databaseSize(db).bytes };
}

const CHUNK_ROWS = 20_000;

/**
 * Deletes raw edges received before `nowMs - keepMs`, in chunks, each its own transaction: a day of
 * edges for many loops is millions of rows, and one huge delete would hold the write lock and grow the
 * WAL by as much. Cheap enough to call hourly. Returns the rows deleted.
 */
export function pruneEdges(store: Store, keepMs: number, nowMs: number): number {
  const cutoff = toIso(nowMs - keepMs);
  const deleteChunk = store.db.prepare(
    `DELETE FROM edges WHERE id IN (SELECT id FROM edges WHERE at < ? ORDER BY at LIMIT ${CHUNK_ROWS})`,
  );
  let total = 0;
  for (;;) {
    const deleted = store.transaction(() => deleteChunk.run(cutoff).changes);
    total += deleted;
    if (deleted < CHUNK_ROWS) return total;
  }
}
