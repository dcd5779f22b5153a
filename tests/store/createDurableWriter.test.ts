import { execFileSync } from 'node:child_process';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createDurableWriter, type DurableWriterOptions } from '../../src/store/createDurableWriter.js';
import type { EdgeRow } from '../../src/store/edgeRepo.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import type { StorageFailure } from '../../src/store/createDurableWriter.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { storeOnFillingDisk, T0 } from './storeTestKit.js';
import { skipForMachine } from '../helpers/machineSkip.js';

/** Records every callback, with a fake clock the test moves by hand. */
function harness(store: Store, extra: Partial<DurableWriterOptions> = {}) {
  const calls = { failing: [] as StorageFailure[], recovered: [] as unknown[], rejected: [] as string[] };
  let nowMs = T0;
  const writer = createDurableWriter({
    store,
    onFailing: (f) => calls.failing.push(f),
    onRecovered: (info) => calls.recovered.push(info),
    onRejected: (label) => calls.rejected.push(label),
    retryMs: 5_000,
    now: () => nowMs,
    ...extra,
  });
  return { writer, calls, advance: (ms: number) => (nowMs += ms) };
}

const reasons = (store: Store): string[] => store.stateChanges.list({ limit: 100_000 }).map((c) => c.reason);
const change = (i: number) => (s: Store) =>
  void s.stateChanges.insert({ loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: i, at: T0 + i, reason: `change ${i}` });

describe('createDurableWriter: queue rules (storage errors injected at the transaction)', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let real: Store;
  let diskFull = false;
  let flaky: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    real = openStore({ path: join(tmp.dir, 'pw.db') });
    diskFull = false;
    flaky = storeOnFillingDisk(real, () => diskFull);
  });
  afterEach(() => {
    real.close();
    tmp.cleanup();
  });

  it('keeps failed work in order, reports failing once, and writes it all on recovery', () => {
    const { writer, calls, advance } = harness(flaky);
    expect(writer.commit('c0', change(0))).toBe('written');
    diskFull = true;
    expect(writer.commit('c1', change(1))).toBe('queued');
    expect(writer.commit('c2', change(2))).toBe('queued');
    advance(10_000);
    expect(writer.commit('c3', change(3))).toBe('queued'); // retried (interval passed), still full
    expect(writer.flush()).toBe('failing');
    expect(calls.failing).toHaveLength(1);
    expect(calls.failing[0]).toMatchObject({ kind: 'disk-full', sqliteCode: 'SQLITE_FULL', label: 'c1' });
    expect(writer.status()).toMatchObject({ pending: 3, failingSinceMs: T0 });
    diskFull = false;
    advance(1_000);
    expect(writer.commit('c4', change(4))).toBe('queued'); // inside the retry interval: waits its turn
    expect(writer.flush()).toBe('written');
    expect(calls.recovered).toEqual([{ written: 4, droppedBatches: 0, failedForMs: 11_000 }]);
    expect(reasons(real)).toEqual(['change 0', 'change 1', 'change 2', 'change 3', 'change 4']);
    expect(writer.flush()).toBe('idle');
    expect(writer.commit('c5', change(5))).toBe('written');
  });

  it('when full, drops the oldest droppable batches first and never a state change', () => {
    const { writer, calls } = harness(flaky, { maxQueued: 4 });
    diskFull = true;
    const edge = (n: number) => (s: Store) => s.edges.insertMany([{ decoderId: 'office', input: 1, band: 'H', decoderUs: n, at: T0 + n }]);
    writer.commit('e0', edge(0), { droppable: true });
    writer.commit('c1', change(1));
    writer.commit('e2', edge(2), { droppable: true });
    writer.commit('e3', edge(3), { droppable: true });
    for (let i = 4; i < 10; i++) writer.commit(`c${i}`, change(i));
    expect(writer.status().droppedBatches).toBe(3);
    expect(writer.pending()).toBe(7); // the bound gives way to work that must not be lost
    diskFull = false;
    writer.flush();
    expect(reasons(real)).toEqual([1, 4, 5, 6, 7, 8, 9].map((i) => `change ${i}`));
    expect(real.edges.count()).toBe(0);
    expect(calls.recovered).toEqual([{ written: 7, droppedBatches: 3, failedForMs: 0 }]);
  });

  it('rejects work that fails for a non-storage reason without failing or blocking the rest', () => {
    const { writer, calls } = harness(flaky);
    const orphanAudit = (s: Store) => void s.audit.insert({ at: T0, actor: 'x', action: 'raise', alarmId: 999, loopId: null, note: null });
    expect(writer.commit('orphan', orphanAudit)).toBe('rejected');
    expect(calls.failing).toHaveLength(0);
    diskFull = true;
    writer.commit('c1', change(1));
    writer.commit('orphan-again', orphanAudit);
    writer.commit('c2', change(2));
    diskFull = false;
    expect(writer.flush()).toBe('written');
    expect(calls.rejected).toEqual(['orphan', 'orphan-again']);
    expect(reasons(real)).toEqual(['change 1', 'change 2']);
  });

  it('never throws to the caller, even when its own reporters throw', () => {
    const { writer } = harness(flaky, {
      onFailing: () => {
        throw new Error('mail down too');
      },
      onRecovered: () => {
        throw new Error('still down');
      },
    });
    diskFull = true;
    expect(() => writer.commit('c1', change(1))).not.toThrow();
    diskFull = false;
    expect(() => writer.flush()).not.toThrow();
    expect(reasons(real)).toEqual(['change 1']);
  });
});

describe('createDurableWriter against a real full disk (a 2 MB tmpfs)', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let mountDir: string;
  let mounted: string | null;
  let store: Store | null;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    mountDir = join(tmp.dir, 'small-disk');
    mkdirSync(mountDir);
    store = null;
    try {
      execFileSync('mount', ['-t', 'tmpfs', '-o', 'size=2m', 'tmpfs', mountDir], { stdio: 'pipe' });
      mounted = null;
    } catch (error) {
      mounted = `mount -t tmpfs is not permitted here (${String((error as { stderr?: Buffer }).stderr ?? error).trim()})`;
    }
  });
  afterEach(() => {
    store?.close();
    if (mounted === null) execFileSync('umount', ['-l', mountDir]);
    tmp.cleanup();
  });

  it('queues while the disk is full, raises failing once, and loses nothing once space returns', (ctx) => {
    if (mounted !== null) skipForMachine(ctx, `${mounted}; the injected-error tests above still cover the queue`);
    store = openStore({ path: join(mountDir, 'pairwatch.db') });
    const { writer, calls, advance } = harness(store);
    const edgeBatch = (i: number): EdgeRow[] =>
      Array.from({ length: 200 }, (_, k) => ({ decoderId: 'office', input: 1 + (k % 4), band: k % 2 ? 'N' : 'H', decoderUs: i * 1000 + k, at: T0 + i * 1000 + k }));

    const accepted: number[] = [];
    let firstQueued = -1;
    for (let i = 0; i < 5_000 && (firstQueued < 0 || i < firstQueued + 20); i++) {
      const batch = edgeBatch(i);
      writer.commit(`edges ${i}`, (s) => s.edges.insertMany(batch), { droppable: true });
      const outcome = writer.commit(`change ${i}`, change(i));
      expect(outcome).not.toBe('rejected');
      accepted.push(i);
      if (outcome === 'queued' && firstQueued < 0) firstQueued = i;
    }
    expect(firstQueued).toBeGreaterThan(0); // the disk did fill up
    expect(calls.failing).toHaveLength(1);
    expect(calls.failing[0]?.kind).toBe('disk-full');
    advance(5_000);
    expect(writer.flush()).toBe('failing'); // still no room

    execFileSync('mount', ['-o', 'remount,size=32m', mountDir]);
    advance(5_000);
    expect(writer.flush()).toBe('written');
    expect(calls.recovered).toHaveLength(1);
    expect(writer.pending()).toBe(0);
    // Everything accepted is there, in order, and nothing was dropped at this queue size.
    expect(reasons(store)).toEqual(accepted.map((i) => `change ${i}`));
    expect(store.edges.count()).toBe(accepted.length * 200);
    expect(writer.commit('after', change(accepted.length))).toBe('written');
    expect(store.db.pragma('quick_check', { simple: true })).toBe('ok');
  });
});

describe('createDurableWriter against a real lock held by another connection', () => {
  it('queues on SQLITE_BUSY after the busy timeout and writes once the lock is released', () => {
    const tmp = makeTempDir('pw-store-');
    const store = openStore({ path: join(tmp.dir, 'pw.db'), busyTimeoutMs: 50 });
    const other = new Database(store.path);
    try {
      const { writer, calls } = harness(store);
      other.exec('BEGIN IMMEDIATE'); // e.g. someone's sqlite3 session left open mid-transaction
      expect(writer.commit('c1', change(1))).toBe('queued');
      expect(calls.failing[0]).toMatchObject({ kind: 'busy', sqliteCode: 'SQLITE_BUSY' });
      other.exec('COMMIT');
      expect(writer.flush()).toBe('written');
      expect(reasons(store)).toEqual(['change 1']);
    } finally {
      other.close();
      store.close();
      tmp.cleanup();
    }
  });
});

describe('createDurableWriter against files made unwritable (chattr +i on the database and its WAL)', () => {
  it('queues on the write error and writes everything once the files are writable again', (ctx) => {
    const tmp = makeTempDir('pw-store-');
    const store = openStore({ path: join(tmp.dir, 'pw.db') });
    // Only the database and its WAL: SQLite maps the WAL index (-shm) into memory, and an immutable
    // mapping would kill the process with SIGBUS rather than return an error.
    const files = [store.path, `${store.path}-wal`];
    let locked = false;
    try {
      const { writer, calls } = harness(store);
      expect(writer.commit('c0', change(0))).toBe('written');
      try {
        execFileSync('chattr', ['+i', ...files], { stdio: 'pipe' });
        locked = true;
      } catch (error) {
        skipForMachine(ctx, `chattr +i is not permitted here (${String((error as { stderr?: Buffer }).stderr ?? error).trim()})`);
      }
      expect(writer.commit('c1', change(1))).toBe('queued');
      expect(writer.commit('c2', change(2))).toBe('queued');
      expect(calls.failing).toHaveLength(1);
      expect(calls.failing[0]?.sqliteCode).toMatch(/^SQLITE_(IOERR|READONLY)/);
      expect(writer.flush()).toBe('failing');
      execFileSync('chattr', ['-i', ...files]);
      locked = false;
      expect(writer.flush()).toBe('written');
      expect(calls.recovered).toHaveLength(1);
      expect(reasons(store)).toEqual(['change 0', 'change 1', 'change 2']);
      expect(store.db.pragma('quick_check', { simple: true })).toBe('ok');
    } finally {
      if (locked) execFileSync('chattr', ['-i', ...files]);
      store.close();
      tmp.cleanup();
    }
  });
});
