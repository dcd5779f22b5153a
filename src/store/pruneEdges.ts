import type { Store } from './openStore.js';
import { toIso } from './isoTime.js';

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
