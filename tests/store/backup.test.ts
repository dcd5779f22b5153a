import { spawn } from 'node:child_process';
import { once } from 'node:events';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { backupFileTo, backupTo, checkPairwatchDatabase } from '../../src/store/backup.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0, makeAlarm, snapshotTables } from './storeTestKit.js';

const childScript = fileURLToPath(new URL('./backupWriterChild.mjs', import.meta.url));

function readLine(stream: NodeJS.ReadableStream, wanted: RegExp): Promise<string> {
  return new Promise((resolve, reject) => {
    let buffer = '';
    const onData = (chunk: Buffer): void => {
      buffer += chunk.toString('utf8');
      const line = buffer.split('\n').find((l) => wanted.test(l));
      if (line !== undefined) {
        stream.off('data', onData);
        resolve(line);
      }
    };
    stream.on('data', onData);
    stream.once('end', () => reject(new Error(`stream ended before ${wanted}; got: ${buffer}`)));
  });
}

describe('backupTo', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let store: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    store = openStore({ path: join(tmp.dir, 'pw.db') });
    store.loopStatus.ensureLoops(['well-pit', 'calf-shed'], T0);
    store.alarms.upsert(makeAlarm());
    store.audit.insert({ at: T0, actor: 'pairwatch', action: 'raise', alarmId: 1, loopId: 'well-pit', note: null });
  });
  afterEach(() => {
    store.close();
    tmp.cleanup();
  });

  it('makes a consistent copy while another process keeps inserting', async () => {
    // Some bulk first, so the copy takes several steps and the writer gets in between them.
    const rows = Array.from({ length: 60_000 }, (_, i) => ({ decoderId: 'office', input: 2, band: 'N' as const, decoderUs: i, at: T0 + i }));
    store.transaction(() => store.edges.insertMany(rows));

    const child = spawn(process.execPath, [childScript, store.path], { stdio: ['pipe', 'pipe', 'inherit'] });
    try {
      await readLine(child.stdout, /^ready$/);
      const before = store.edges.count();
      const file = join(tmp.dir, 'copies', 'now.db');
      const result = await backupTo(store, file);
      const after = store.edges.count();
      child.stdin.write('stop\n');
      const done = await readLine(child.stdout, /^done \d+$/);
      await once(child, 'exit');

      expect(after).toBeGreaterThan(before); // the writer really was writing during the copy
      expect(Number(done.split(' ')[1])).toBeGreaterThan(0);
      expect(result.file).toBe(file);
      expect(existsSync(`${file}.partial`)).toBe(false);
      expect(checkPairwatchDatabase(file, Number.MAX_SAFE_INTEGER).schemaVersion).toBe(store.opened.schemaVersion); // includes SQLite's quick_check

      const copy = new Database(file, { readonly: true });
      try {
        const copied = copy.prepare('SELECT count(*) AS n, max(id) AS top FROM edges').get() as { n: number; top: number };
        expect(copied.n).toBeGreaterThanOrEqual(before);
        expect(copied.n).toBeLessThanOrEqual(after);
        // A snapshot: whole batches only, and no holes in the ids.
        expect((copied.n - 60_000) % 100).toBe(0);
        expect(copied.top).toBe(copied.n);
        const snap = snapshotTables(copy);
        const live = snapshotTables(store.db);
        expect(snap.alarms).toEqual(live.alarms);
        expect(snap.audit).toEqual(live.audit);
        expect(snap.loop_status).toEqual(live.loop_status);
      } finally {
        copy.close();
      }
    } finally {
      if (child.exitCode === null) child.kill();
    }
  });

  it('copies by path, read-only, beside the daemon that holds the database', async () => {
    store.kv.set('marker', 'from the daemon');
    const file = join(tmp.dir, 'by-path.db');
    const result = await backupFileTo(store.path, file);
    expect(result.file).toBe(file);
    const copy = new Database(file, { readonly: true });
    try {
      expect(copy.prepare("SELECT value FROM kv WHERE key = 'marker'").pluck().get()).toBe('from the daemon');
    } finally {
      copy.close();
    }
    await expect(backupFileTo(join(tmp.dir, 'nothing-here.db'), file)).rejects.toMatchObject({ code: 'PW_STORE_NOT_PAIRWATCH' });
  });

  it('reports a failure as a StoreError and leaves no partial file', async () => {
    const blocked = join(tmp.dir, 'pw.db', 'inside-a-file.db'); // a folder that is really a file
    await expect(backupTo(store, blocked)).rejects.toMatchObject({ code: 'PW_STORE_BACKUP_FAILED' });
  });
});
