import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0 } from './storeTestKit.js';

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
    flaky = {
      ...real,
      transaction: (fn) => {
        if (diskFull) throw Object.assign(new Error('database or disk is full'), { code: 'SQLITE_FULL' });
        return real.transaction(fn);
      },
    };
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
