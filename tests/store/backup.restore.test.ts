import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { backupTo, restoreFrom } from '../../src/store/backup.js';
import { openStore } from '../../src/store/openStore.js';
import { lockFileFor } from '../../src/store/storeLock.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0, makeAlarm, snapshotTables } from './storeTestKit.js';

const sha256 = (file: string): string => createHash('sha256').update(readFileSync(file)).digest('hex');

/** A store with something in every table the store writes. */
function populate(path: string): void {
  const store = openStore({ path });
  try {
    store.loopStatus.ensureLoops(['well-pit', 'calf-shed'], T0);
    store.loopStatus.setState('well-pit', 'tripped', T0 + 1_000);
    store.stateChanges.insert({ loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: 123_456, at: T0 + 1_000, reason: 'no heartbeat' });
    store.alarms.upsert(makeAlarm());
    store.alarms.setThreadMessageId(1, '<a1@hollow>');
    store.audit.insert({ at: T0 + 1_000, actor: 'pairwatch', action: 'raise', alarmId: 1, loopId: 'well-pit', note: null });
    const session = store.decoderSessions.open('office', T0);
    store.decoderSessions.counters(session, { frames: 10, badFrames: 1, lostFrames: 0 }, T0);
    store.transaction(() => store.edges.insertMany([{ decoderId: 'office', input: 1, band: 'H', decoderUs: 5, at: T0 }]));
    store.lineQuality.upsertMinute('well-pit', T0, { pulses: 2, intervalCount: 1, intervalSumMs: 500, intervalSqSumMs: 250_000, outOfTolerance: 0, glitches: 0, longPulses: 0, lostFrames: 0 });
    store.kv.set('report.last', 'yesterday');
    store.db.prepare("INSERT INTO users (name, role, password_hash, password_salt, created_at) VALUES ('ann', 'operator', 'h', 's', 'now')").run();
  } finally {
    store.close();
  }
}

function snapshotOf(path: string): ReturnType<typeof snapshotTables> {
  const db = new Database(path, { readonly: true });
  try {
    return snapshotTables(db);
  } finally {
    db.close();
  }
}

describe('restoreFrom', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let live: string;
  let backup: string;
  beforeEach(async () => {
    tmp = makeTempDir('pw-store-');
    live = join(tmp.dir, 'data', 'pairwatch.db');
    backup = join(tmp.dir, 'pairwatch-20260115.db');
    populate(live);
    const store = openStore({ path: live, lock: false });
    await backupTo(store, backup);
    store.close();
  });
  afterEach(() => tmp.cleanup());

  it('gives back exactly the backed-up rows in every table, and keeps the replaced file', async () => {
    const atBackup = snapshotOf(backup);
    expect(Object.keys(atBackup).length).toBeGreaterThan(15);
    // Life goes on after the backup…
    const store = openStore({ path: live });
    store.alarms.upsert(makeAlarm({ id: 2, condition: 'open', priority: 'trouble' }));
    store.kv.set('report.last', 'today');
    store.close();
    const beforeRestore = snapshotOf(live);

    const result = await restoreFrom(backup, live, { now: () => Date.UTC(2026, 0, 20, 9, 30) });
    expect(snapshotOf(live)).toEqual(atBackup);
    expect(result.previousKeptAs).toBe(`${live}.before-restore-20260120T093000Z.bak`);
    expect(snapshotOf(result.previousKeptAs ?? '')).toEqual(beforeRestore);
    // And the daemon can open the restored file.
    const reopened = openStore({ path: live });
    expect(reopened.alarms.get(1)).toEqual(makeAlarm());
    expect(reopened.alarms.get(2)).toBeNull();
    reopened.close();
  });

  it('refuses while the daemon holds the database', async () => {
    const daemon = openStore({ path: live });
    try {
      await expect(restoreFrom(backup, live)).rejects.toMatchObject({ code: 'PW_STORE_LOCKED' });
      expect(daemon.alarms.get(1)).not.toBeNull();
    } finally {
      daemon.close();
    }
  });

  it('goes ahead over a stale lock of a process that died', async () => {
    const dead = spawnSync(process.execPath, ['-e', 'process.stdout.write(String(process.pid))'], { encoding: 'utf8' }).stdout;
    writeFileSync(lockFileFor(live), `${dead}\n`);
    await restoreFrom(backup, live);
    expect(existsSync(lockFileFor(live))).toBe(false);
  });

  it('refuses a file that is not a pairwatch database and leaves the live one alone', async () => {
    const before = sha256(live);
    const foreign = join(tmp.dir, 'foreign.db');
    const other = new Database(foreign);
    other.exec('CREATE TABLE recipes (name TEXT)');
    other.close();
    await expect(restoreFrom(foreign, live)).rejects.toMatchObject({ code: 'PW_STORE_NOT_PAIRWATCH' });
    const text = join(tmp.dir, 'notes.db');
    writeFileSync(text, 'not sqlite at all '.repeat(100));
    await expect(restoreFrom(text, live)).rejects.toMatchObject({ code: 'PW_STORE_NOT_PAIRWATCH' });
    await expect(restoreFrom(join(tmp.dir, 'missing.db'), live)).rejects.toMatchObject({ code: 'PW_STORE_NOT_PAIRWATCH' });
    expect(sha256(live)).toBe(before);
  });

  it('refuses a backup from a newer pairwatch', async () => {
    const db = new Database(backup);
    db.prepare("INSERT INTO schema_migrations (version, name, applied_at) VALUES (999, '999_future.sql', 'later')").run();
    db.close();
    await expect(restoreFrom(backup, live)).rejects.toMatchObject({ code: 'PW_STORE_TOO_NEW' });
  });
});
