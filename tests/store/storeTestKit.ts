import type { Store } from '../../src/store/openStore.js';
import type Database from 'better-sqlite3';
import type { AlarmRecord } from '../../src/alarms/alarmTypes.js';
import { sampleAlarm } from '../helpers/sampleAlarm.js';

/** Every row of every table, in primary-key order: two databases are the same data iff these are equal. */
export function snapshotTables(db: Database.Database): Record<string, unknown[]> {
  const tables = db
    .prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name")
    .pluck()
    .all() as string[];
  const out: Record<string, unknown[]> = {};
  for (const table of tables) {
    const pk = (db.prepare(`SELECT name FROM pragma_table_info(?) WHERE pk > 0 ORDER BY pk`).pluck().all(table) as string[]);
    const order = pk.length > 0 ? pk.map((c) => `"${c}"`).join(', ') : 'rowid';
    out[table] = db.prepare(`SELECT * FROM "${table}" ORDER BY ${order}`).all();
  }
  return out;
}

export const T0 = Date.UTC(2026, 0, 15, 6, 0, 0); // 2026-01-15T06:00:00Z, a winter morning

/** The shared sample alarm as the store tests keep it: latched, raised at T0, first step already mailed. */
export function makeAlarm(overrides: Partial<AlarmRecord> = {}): AlarmRecord {
  return sampleAlarm(T0, {
    latched: true,
    escalation: { stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * 60_000, notified: ['office'] },
    ...overrides,
  });
}

/**
 * The store as seen through a disk that fills: while `isFull()` every transaction fails with the error
 * SQLite reports for a full disk (SQLITE_FULL, the extended result code name better-sqlite3 sets).
 */
export function storeOnFillingDisk(real: Store, isFull: () => boolean): Store {
  return {
    ...real,
    transaction: (fn) => {
      if (isFull()) throw Object.assign(new Error('database or disk is full'), { code: 'SQLITE_FULL' });
      return real.transaction(fn);
    },
  };
}
