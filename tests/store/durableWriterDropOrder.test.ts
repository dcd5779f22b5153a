import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { storeOnFillingDisk, T0 } from './storeTestKit.js';

/**
 * When the in-memory queue is full the OLDEST droppable batches go first: the newest raw edges are the
 * evidence nearest to whatever is happening now. The test names the batches that survive, so dropping
 * the newest (or the one arriving) cannot pass.
 */
describe('createDurableWriter: which droppable batches survive a full queue', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let real: Store;
  let diskFull = true;
  let flaky: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-drop-');
    real = openStore({ path: join(tmp.dir, 'pw.db') });
    diskFull = true;
    flaky = storeOnFillingDisk(real, () => diskFull);
  });
  afterEach(() => {
    real.close();
    tmp.cleanup();
  });

  const edgeBatch = (n: number) => (s: Store) => s.edges.insertMany([{ decoderId: 'office', input: 1, band: 'H', decoderUs: n, at: T0 + n }]);
  const change = (n: number) => (s: Store) =>
    void s.stateChanges.insert({ loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: n, at: T0 + n, reason: `change ${n}` });
  const storedEdges = (): number[] =>
    (real.db.prepare('SELECT decoder_us AS us FROM edges ORDER BY decoder_us').all() as Array<{ us: number }>).map((r) => r.us);

  it('keeps the newest edge batches, in order, and every state change', () => {
    const writer = createDurableWriter({ store: flaky, onFailing() {}, onRecovered() {}, maxQueued: 4, now: () => T0 });
    writer.commit('e0', edgeBatch(0), { droppable: true });
    writer.commit('e1', edgeBatch(1), { droppable: true });
    writer.commit('c2', change(2));
    writer.commit('e3', edgeBatch(3), { droppable: true });
    // Full (4). Each further batch pushes out the oldest droppable one still queued.
    writer.commit('e4', edgeBatch(4), { droppable: true }); // drops e0
    writer.commit('e5', edgeBatch(5), { droppable: true }); // drops e1
    writer.commit('e6', edgeBatch(6), { droppable: true }); // drops e3
    expect(writer.status().droppedBatches).toBe(3);
    expect(writer.pending()).toBe(4);
    diskFull = false;
    expect(writer.flush()).toBe('written');
    expect(storedEdges()).toEqual([4, 5, 6]);
    expect(real.stateChanges.list({ limit: 10 }).map((c) => c.reason)).toEqual(['change 2']);
  });
});

describe('createDurableWriter: fsync policy per batch (synchronous=FULL unless only droppable data)', () => {
  it('droppable-only work runs with synchronous NORMAL, everything else with FULL, and FULL is put back', () => {
    const tmp = makeTempDir('pw-sync-');
    const store = openStore({ path: join(tmp.dir, 'pw.db') });
    try {
      // SQLite's PRAGMA synchronous values: 1 = NORMAL, 2 = FULL (sqlite.org/pragma.html#pragma_synchronous).
      const seen: Array<[string, unknown]> = [];
      const look = (label: string) => (s: Store) => void seen.push([label, s.db.pragma('synchronous', { simple: true })]);
      const writer = createDurableWriter({ store, onFailing() {}, onRecovered() {} });
      expect(store.db.pragma('synchronous', { simple: true })).toBe(2);
      writer.commit('edges', look('droppable'), { droppable: true });
      writer.commit('state', look('state'));
      expect(seen).toEqual([
        ['droppable', 1],
        ['state', 2],
      ]);
      expect(store.db.pragma('synchronous', { simple: true })).toBe(2);
    } finally {
      store.close();
      tmp.cleanup();
    }
  });

  it('a queue written on recovery in batches: all droppable → NORMAL, any state change in the batch → FULL', () => {
    const tmp = makeTempDir('pw-sync-');
    const real = openStore({ path: join(tmp.dir, 'pw.db') });
    let full = true;
    const flaky: Store = {
      ...real,
      transaction: (fn) => {
        if (full) throw Object.assign(new Error('database or disk is full'), { code: 'SQLITE_FULL' });
        return real.transaction(fn);
      },
    };
    try {
      const seen: Array<[string, unknown]> = [];
      const look = (label: string) => (s: Store) => void seen.push([label, s.db.pragma('synchronous', { simple: true })]);
      let nowMs = T0;
      const recovered: unknown[] = [];
      const writer = createDurableWriter({ store: flaky, onFailing() {}, onRecovered: (info) => recovered.push(info), batchSize: 2, now: () => nowMs });
      writer.commit('e1', look('e1'), { droppable: true });
      writer.commit('e2', look('e2'), { droppable: true });
      writer.commit('c3', look('c3'));
      writer.commit('e4', look('e4'), { droppable: true });
      expect(writer.status()).toMatchObject({ pending: 4, failingSinceMs: T0, droppedBatches: 0 });
      expect(writer.status().failing).toMatchObject({ kind: 'disk-full' });
      full = false;
      nowMs += 7_000;
      expect(writer.flush()).toBe('written');
      // Batches of two: [e1, e2] only droppable; [c3, e4] holds a state change.
      expect(seen).toEqual([
        ['e1', 1],
        ['e2', 1],
        ['c3', 2],
        ['e4', 2],
      ]);
      expect(recovered).toEqual([{ written: 4, droppedBatches: 0, failedForMs: 7_000 }]);
      expect(writer.status()).toEqual({ failing: null, failingSinceMs: null, pending: 0, droppedBatches: 0 });
    } finally {
      real.close();
      tmp.cleanup();
    }
  });
});
