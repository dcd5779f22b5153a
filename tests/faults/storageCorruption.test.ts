import { closeSync, existsSync, mkdirSync, openSync, readdirSync, writeSync } from 'node:fs';
import { Writable } from 'node:stream';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import pino from 'pino';
import { afterEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { runMaintenance } from '../../src/daemon/runMaintenance.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { checkDatabase } from '../../src/ops/doctor/runDoctor.js';
import { dailyBackup } from '../../src/store/backup.js';
import { openStore } from '../../src/store/openStore.js';
import { useTempDirs } from '../helpers/tempDir.js';
import { faultSiteYaml } from './fixtures/siteYaml.js';

/**
 * Issue 16 item 10: damage in the middle of the database file went unnoticed while the monitor ran.
 * A real SQLite file is filled with history, closed, and one b-tree page of the state_changes table
 * (not the 100-byte file header, not the schema page) is overwritten, as a failing SD card or a torn
 * write would. SQLite's documented checks must then find it (sqlite.org/pragma.html: "PRAGMA
 * quick_check … verifies that the database file is well-formed … does not verify that indices match
 * their tables"; integrity_check does both and returns the single row "ok" when nothing is wrong):
 * quick_check at start, integrity_check in the daily maintenance and in `pairwatch doctor`, each
 * raising "storage damaged" and naming `pairwatch restore` with the newest daily backup.
 */
const T0 = Date.UTC(2026, 0, 23, 2, 0, 0);
const tempDir = useTempDirs('each');

function logCapture() {
  const lines: Array<{ level: number; msg: string }> = [];
  const stream = new Writable({
    write(chunk: Buffer, _enc, done) {
      for (const line of chunk.toString('utf8').split('\n')) if (line.trim()) lines.push(JSON.parse(line) as { level: number; msg: string });
      done();
    },
  });
  return { logger: pino({ level: 'info' }, stream), lines };
}

/** A site database with a few thousand state changes and yesterday's daily backup beside it. */
async function siteDatabase(): Promise<{ dir: string; dbPath: string; yaml: string; backup: string }> {
  const dir = tempDir('pw-faults-corrupt-');
  const dbPath = join(dir, 'data', 'site.db');
  mkdirSync(join(dir, 'data'), { recursive: true });
  const store = openStore({ path: dbPath });
  store.transaction(() => {
    for (let i = 0; i < 4000; i++) {
      store.stateChanges.insert({ loopId: 'bldg-01', from: 'healthy', to: 'tripped', decoderUs: i, at: T0 - 86_400_000 + i * 1000, reason: `history row ${i} of the lambing season` });
    }
  });
  const made = await dailyBackup(store, join(dir, 'data', 'backups'), 7, T0 - 86_400_000, 'Europe/London');
  store.close();
  const yaml = faultSiteYaml({ port: join(dir, 'no-decoder'), loops: 2, dbPath });
  return { dir, dbPath, yaml, backup: made.backup!.file };
}

/** Overwrites the start of one leaf page of state_changes in the middle of the table (the file is closed, WAL folded in). */
function damageMiddlePage(dbPath: string): number {
  const db = new Database(dbPath, { readonly: true });
  const pageSize = db.pragma('page_size', { simple: true }) as number;
  const leaves = db.prepare("SELECT pageno FROM dbstat WHERE name = 'state_changes' AND pagetype = 'leaf' ORDER BY pageno").pluck().all() as number[];
  db.close();
  expect(leaves.length).toBeGreaterThan(10);
  const page = leaves[Math.floor(leaves.length / 2)]!;
  expect(page).toBeGreaterThan(1); // never page 1: it holds the file header and the schema
  const fd = openSync(dbPath, 'r+');
  writeSync(fd, Buffer.alloc(64, 0xa5), 0, 64, (page - 1) * pageSize);
  closeSync(fd);
  return page;
}

describe('a database damaged in the middle is found (issue 16 item 10)', () => {
  let monitor: Monitor | null = null;
  afterEach(async () => {
    await monitor?.stop('test over', 2000);
    monitor = null;
  });

  it('at start: quick_check finds it, "storage damaged" is raised, /healthz fails, the log says how to restore', async () => {
    const site = await siteDatabase();
    damageMiddlePage(site.dbPath);
    const { logger, lines } = logCapture();
    monitor = await startMonitor({ config: parseConfig(site.yaml), configDir: site.dir, logger, now: () => T0, listen: false, announce: false });
    const damaged = monitor.core.openAlarms().filter((a) => a.condition === 'storage-damaged' && a.active);
    expect(damaged).toHaveLength(1);
    const health = (await monitor.web.inject({ method: 'GET', url: '/healthz' })).json() as { checks: Array<{ name: string; ok: boolean; reason: string | null }> };
    expect(health.checks.find((c) => c.name === 'store')).toMatchObject({ ok: false });
    const advice = lines.find((l) => l.level >= 50 && /damaged/.test(l.msg));
    expect(advice?.msg).toContain(`pairwatch restore ${site.backup}`);
  });

  it('an intact file raises nothing at start (the check is not just always failing)', async () => {
    const site = await siteDatabase();
    monitor = await startMonitor({ config: parseConfig(site.yaml), configDir: site.dir, logger: pino({ level: 'silent' }), now: () => T0, listen: false, announce: false });
    expect(monitor.core.openAlarms().filter((a) => a.condition === 'storage-damaged')).toHaveLength(0);
  });

  it('daily maintenance: integrity_check finds it, reports it, and does not replace good backups with a damaged copy', async () => {
    const site = await siteDatabase();
    damageMiddlePage(site.dbPath);
    const store = openStore({ path: site.dbPath });
    const { logger, lines } = logCapture();
    const found: string[][] = [];
    try {
      await runMaintenance({ config: parseConfig(site.yaml), store, now: T0, logger, force: true, onDamaged: (problems) => found.push(problems) });
    } finally {
      store.close();
    }
    expect(found).toHaveLength(1);
    expect(found[0]!.length).toBeGreaterThan(0);
    expect(lines.some((l) => l.level >= 50 && l.msg.includes(`pairwatch restore ${site.backup}`))).toBe(true);
    // Only yesterday's good backup: today's would have been a copy of the damage.
    expect(readdirSync(join(site.dir, 'data', 'backups'))).toEqual([site.backup.split('/').pop()]);
  });

  it('pairwatch doctor: the database check fails with integrity_check findings and the restore command', async () => {
    const site = await siteDatabase();
    expect((await checkDatabase(site.dbPath)).status).toBe('ok');
    damageMiddlePage(site.dbPath);
    const result = await checkDatabase(site.dbPath);
    expect(result.status).toBe('fail');
    expect(result.fix).toContain(`pairwatch restore ${site.backup}`);
    expect(existsSync(site.dbPath)).toBe(true);
  });
});
