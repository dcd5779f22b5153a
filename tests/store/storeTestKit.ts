import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import type Database from 'better-sqlite3';
import type { AlarmRecord } from '../../src/alarms/alarmTypes.js';

/** A fresh folder under the OS temp dir; `cleanup` removes it. */
export function makeTempDir(prefix = 'pw-store-'): { dir: string; cleanup: () => void } {
  const dir = mkdtempSync(join(tmpdir(), prefix));
  return { dir, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

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

export function makeAlarm(overrides: Partial<AlarmRecord> = {}): AlarmRecord {
  return {
    id: 1,
    source: 'well-pit',
    loopId: 'well-pit',
    condition: 'tripped',
    priority: 'alarm',
    state: 'unacknowledged',
    active: true,
    latched: true,
    policy: 'default',
    raisedAt: T0,
    clearedAt: null,
    ackedAt: null,
    ackedBy: null,
    note: null,
    shelvedUntil: null,
    shelveReason: null,
    closedAt: null,
    escalation: { stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * 60_000, notified: ['office'] },
    ...overrides,
  };
}
