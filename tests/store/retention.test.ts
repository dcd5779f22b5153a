import { statSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { siteConfigSchema } from '../../src/config/schema.js';
import { applyRetention, type RetentionReport } from '../../src/store/retention.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { generateYear, type YearPlan, type YearTotals } from './generateYear.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { snapshotTables } from './storeTestKit.js';

const DAY = 86_400_000;
const HOUR = 3_600_000;

// The defaults exactly as a site gets them: parsed from a minimal config by the real schema.
const defaults = siteConfigSchema.parse({
  site: { name: 'Larch Hollow' },
  decoders: [{ id: 'office', port: '/dev/ttyUSB0' }],
  loops: [{ id: 'well-pit', name: 'Well pit', decoder: 'office', input: 1 }],
  storage: { path: '/tmp/unused.db' },
}).storage.retention;

const plan: YearPlan = {
  loops: ['well-pit', 'calf-shed'],
  endMs: Date.UTC(2027, 0, 1),
  days: 365,
  edgeHours: 8,
  edgesPerSecond: 4,
  stateChangesPerDay: 4,
};
const now = plan.endMs;

function countWhere(store: Store, sql: string, ...params: unknown[]): number {
  return store.db.prepare(`SELECT count(*) FROM ${sql}`).pluck().get(...params) as number;
}

function sumsPerLoop(store: Store): unknown[] {
  return store.db
    .prepare(`SELECT loop_id, sum(pulses) p, sum(interval_count) c, round(sum(interval_sum_ms), 3) s, round(sum(interval_sq_sum_ms), 0) q,
                     sum(out_of_tolerance) o, sum(glitches) g, sum(lost_frames) l FROM line_quality GROUP BY loop_id ORDER BY loop_id`)
    .all();
}

function bytesByTable(store: Store): Record<string, number> {
  const rows = store.db.prepare('SELECT name, sum(pgsize) AS bytes FROM dbstat GROUP BY name').all() as Array<{ name: string; bytes: number }>;
  return Object.fromEntries(rows.map((r) => [r.name, r.bytes]));
}

describe('applyRetention on a generated year for two loops', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let store: Store;
  let totals: YearTotals;
  let kept: ReturnType<typeof snapshotTables>;
  let sumsBefore: unknown[];
  let report: RetentionReport;
  let emptyBytes: number;

  beforeAll(() => {
    tmp = makeTempDir('pw-store-');
    const empty = openStore({ path: join(tmp.dir, 'empty.db') });
    emptyBytes = statSync(join(tmp.dir, 'empty.db')).size;
    empty.close();
    emptyBytes = statSync(join(tmp.dir, 'empty.db')).size;

    store = openStore({ path: join(tmp.dir, 'pw.db') });
    totals = generateYear(store, plan);
    const snap = snapshotTables(store.db);
    kept = { state_changes: snap.state_changes ?? [], alarms: snap.alarms ?? [], audit: snap.audit ?? [], loop_status: snap.loop_status ?? [] };
    sumsBefore = sumsPerLoop(store);
    report = applyRetention(store, defaults, now);
  }, 120_000);
  afterAll(() => {
    store?.close();
    tmp?.cleanup();
  });

  it('uses the documented defaults: edges 6 h, minutes 90 days, hours 5 years', () => {
    expect(defaults).toMatchObject({ edges: 6 * HOUR, minute_quality: 90 * DAY, hourly_quality: 5 * 365 * DAY });
  });

  it('deletes edges older than the edge retention and keeps every newer one', () => {
    const cutoff = new Date(now - defaults.edges).toISOString();
    // Generated at 4 a second per loop: 6 h of them stay (hand arithmetic: 6 × 3600 × 4 = 86 400 per loop).
    expect(countWhere(store, 'edges')).toBe(86_400 * plan.loops.length);
    expect(countWhere(store, 'edges WHERE at < ?', cutoff)).toBe(0);
    expect(report.edgesDeleted).toBe(totals.edges - 86_400 * plan.loops.length);
  });

  it('folds minutes older than 90 days into hour rows without losing a count', () => {
    const foldCutoff = new Date(now - 90 * DAY).toISOString(); // an hour boundary: now is midnight
    expect(countWhere(store, "line_quality WHERE resolution = 'minute' AND bucket_at < ?", foldCutoff)).toBe(0);
    expect(countWhere(store, "line_quality WHERE resolution = 'minute'")).toBe(90 * 1440 * plan.loops.length);
    expect(countWhere(store, "line_quality WHERE resolution = 'hour'")).toBe((365 - 90) * 24 * plan.loops.length);
    expect(countWhere(store, "line_quality WHERE resolution = 'hour' AND bucket_at >= ?", foldCutoff)).toBe(0);
    expect(report.minuteRowsFolded).toBe((365 - 90) * 1440 * plan.loops.length);
    // Every sum (and so every mean and jitter) is what it was before folding.
    expect(sumsPerLoop(store)).toEqual(sumsBefore);
  });

  it('keeps every state change, alarm, audit row and loop status', () => {
    const after = snapshotTables(store.db);
    expect(after.state_changes).toEqual(kept.state_changes);
    expect(after.alarms).toEqual(kept.alarms);
    expect(after.audit).toEqual(kept.audit);
    expect(after.loop_status).toEqual(kept.loop_status);
    expect(after.state_changes).toHaveLength(totals.stateChanges);
  });

  it('gives the freed space back to the disk', () => {
    expect(report.bytesAfter).toBeLessThan(report.bytesBefore / 2);
    expect(store.db.pragma('freelist_count', { simple: true })).toBe(0);
    expect(statSync(store.path).size).toBe(report.bytesAfter);
  });

  it('measures the database bytes per loop per year at the default retention (for the README)', () => {
    const perTable = bytesByTable(store);
    const perLoop = (bytes: number): number => bytes / plan.loops.length;
    const mb = (bytes: number): string => (bytes / 1_000_000).toFixed(2);
    const edgeBytes = (perTable.edges ?? 0) + (perTable.edges_by_time ?? 0);
    const qualityBytes = perTable.line_quality ?? 0;
    const historyBytes = ['state_changes', 'state_changes_by_loop', 'state_changes_by_time', 'alarms', 'alarms_open', 'alarms_by_source', 'audit', 'audit_by_alarm', 'audit_by_time']
      .reduce((sum, name) => sum + (perTable[name] ?? 0), 0);
    const lines = [
      `database after one year, ${plan.loops.length} loops, default retention, right after the daily job: ${mb(report.bytesAfter)} MB (empty: ${mb(emptyBytes)} MB)`,
      `per loop: ${mb(perLoop(report.bytesAfter - emptyBytes))} MB in all, of which`,
      `  raw edges (6 h ring at 4 edges/s, constant): ${mb(perLoop(edgeBytes))} MB`,
      `  line quality (90 days of minutes + 275 days of hours): ${mb(perLoop(qualityBytes))} MB`,
      `  history (${plan.stateChangesPerDay} state changes/day, ${plan.stateChangesPerDay / 2} alarms/day with 3 audit rows each): ${mb(perLoop(historyBytes))} MB`,
      `  growth per further year (8 760 hour rows + history): about ${mb(perLoop(qualityBytes) * (8_760 / (90 * 1440 + 275 * 24)) + perLoop(historyBytes))} MB`,
      `before retention (a year of minutes, 8 h of edges): ${mb(report.bytesBefore)} MB`,
    ];
    console.log(lines.join('\n'));
    // The budget the README promises: well under 50 MB per loop for the first year.
    expect(perLoop(report.bytesAfter - emptyBytes)).toBeLessThan(50_000_000);
  });

  it('deletes hour rows older than the hourly retention', () => {
    const again = applyRetention(store, { ...defaults, hourly_quality: 200 * DAY }, now);
    expect(again.hourRowsDeleted).toBe((365 - 200) * 24 * plan.loops.length);
    expect(countWhere(store, "line_quality WHERE resolution = 'hour'")).toBe((200 - 90) * 24 * plan.loops.length);
    expect(countWhere(store, "line_quality WHERE resolution = 'hour' AND bucket_at < ?", new Date(now - 200 * DAY).toISOString())).toBe(0);
    expect(again.edgesDeleted).toBe(0);
    expect(again.minuteRowsFolded).toBe(0);
    expect(store.kv.get('store.retention.last_run')).toBe(new Date(now).toISOString());
  });
});
