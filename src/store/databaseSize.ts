import type { SqliteDatabase } from './openDatabase.js';

export interface DatabaseSize {
  /** page_count × page_size: the main file's size once the WAL is checkpointed. */
  bytes: number;
  /** Free pages inside the file (given back to the disk by incremental vacuum). */
  freeBytes: number;
}

export function databaseSize(db: SqliteDatabase): DatabaseSize {
  const pageSize = db.pragma('page_size', { simple: true }) as number;
  const pages = db.pragma('page_count', { simple: true }) as number;
  const free = db.pragma('freelist_count', { simple: true }) as number;
  return { bytes: pages * pageSize, freeBytes: free * pageSize };
}
