import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { createDurableWriter, fileGoneFailure, type DurableWriterOptions, type RecoveryInfo, type StorageFailure } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { T0 } from './storeTestKit.js';

/**
 * The durable writer over a real SQLite file, through failure episodes: the retry pacing (a commit
 * retries the queue once `retryMs` has passed since the last attempt, 5 s by default), the file guard
 * (a database swapped under the monitor holds work as a failing disk does), what a stop reports
 * (queued labels), and that each episode's recovery report counts that episode only.
 */
let tmp: TempDir;
let real: Store;
/** The failure the next transaction meets, or null: the disk as the test wants it. */
let failure: { code: string } | null;
let flaky: Store;
beforeEach(() => {
  tmp = makeTempDir('pw-episodes-');
  real = openStore({ path: join(tmp.dir, 'site.db') });
  failure = null;
  flaky = {
    ...real,
    transaction: (fn) => {
      if (failure) throw Object.assign(new Error('injected'), failure);
      return real.transaction(fn);
    },
  };
});
afterEach(() => {
  real.close();
  tmp.cleanup();
});

const FULL = { code: 'SQLITE_FULL' };
const BUSY = { code: 'SQLITE_BUSY' };
const change = (i: number) => (s: Store) =>
  void s.stateChanges.insert({ loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: i, at: T0 + i, reason: `change ${i}` });
const edge = (n: number) => (s: Store) => s.edges.insertMany([{ decoderId: 'main', input: 1, band: 'H', decoderUs: n, at: T0 + n }]);
const stored = (): string[] => real.stateChanges.list({ limit: 1000 }).map((c) => c.reason);

function harness(extra: Partial<DurableWriterOptions> = {}) {
  const failing: StorageFailure[] = [];
  const recovered: RecoveryInfo[] = [];
  let nowMs = T0;
  const writer = createDurableWriter({
    store: flaky,
    onFailing: (f) => failing.push(f),
    onRecovered: (info) => recovered.push(info),
    now: () => nowMs,
    ...extra,
  });
  return { writer, failing, recovered, advance: (ms: number) => (nowMs += ms) };
}

describe('durable writer: retry pacing', () => {
  it('by default a commit retries the queue exactly 5 s after the last attempt, not before', () => {
    const { writer, recovered, advance } = harness();
    failure = FULL;
    expect(writer.commit('c1', change(1))).toBe('queued');
    failure = null;
    advance(4_999);
    expect(writer.commit('c2', change(2))).toBe('queued');
    expect(stored()).toEqual([]);
    advance(1);
    // The retry writes the queue, this commit included, in order.
    expect(writer.commit('c3', change(3))).toBe('written');
    expect(stored()).toEqual(['change 1', 'change 2', 'change 3']);
    expect(writer.pending()).toBe(0);
    expect(recovered).toEqual([{ written: 3, droppedBatches: 0, failedForMs: 5_000 }]);
    expect(writer.status()).toEqual({ failing: null, failingSinceMs: null, pending: 0, droppedBatches: 0 });
  });

  it('a failed retry counts as an attempt: the next retry waits another interval', () => {
    const { writer, advance } = harness({ retryMs: 1_000 });
    failure = FULL;
    writer.commit('c1', change(1));
    advance(1_000);
    expect(writer.commit('c2', change(2))).toBe('queued'); // retried, still full
    failure = null;
    advance(999);
    expect(writer.commit('c3', change(3))).toBe('queued');
    expect(stored()).toEqual([]);
    advance(1);
    expect(writer.commit('c4', change(4))).toBe('written');
    expect(stored()).toEqual(['change 1', 'change 2', 'change 3', 'change 4']);
  });

  it('a still-failing flush keeps the work and reports failing; flush on an empty queue is idle', () => {
    const { writer, failing } = harness();
    expect(writer.flush()).toBe('idle');
    failure = FULL;
    writer.commit('c1', change(1));
    expect(writer.flush()).toBe('failing');
    expect(writer.flush()).toBe('failing');
    expect(failing).toHaveLength(1);
    expect(writer.pending()).toBe(1);
    failure = null;
    expect(writer.flush()).toBe('written');
    expect(writer.flush()).toBe('idle');
    expect(stored()).toEqual(['change 1']);
  });
});

describe('durable writer: failure episodes', () => {
  it('reports failing once per episode with the first failure time, and shows the latest failure', () => {
    const { writer, failing, advance } = harness({ retryMs: 1_000 });
    failure = FULL;
    writer.commit('state', change(1));
    advance(2_000);
    failure = BUSY;
    writer.commit('alarm ack', change(2)); // the retry meets a lock now
    expect(failing.map((f) => [f.kind, f.label])).toEqual([['disk-full', 'state']]);
    expect(writer.status()).toMatchObject({ failingSinceMs: T0, pending: 2 });
    // What the board shows is what is wrong now.
    expect(writer.status().failing).toMatchObject({ kind: 'busy', label: 'state' });
  });

  it('a second episode starts its counts afresh: written, dropped batches and time failing', () => {
    const { writer, failing, recovered, advance } = harness({ maxQueued: 2 });
    failure = FULL;
    writer.commit('e1', edge(1), { droppable: true });
    writer.commit('e2', edge(2), { droppable: true });
    writer.commit('e3', edge(3), { droppable: true }); // drops e1
    writer.commit('c4', change(4)); // drops e2: the bound gives way only to work that must not be lost
    advance(3_000);
    failure = null;
    expect(writer.flush()).toBe('written');
    expect(writer.status().droppedBatches).toBe(0);

    advance(60_000);
    failure = FULL;
    writer.commit('c5', change(5));
    advance(2_000);
    failure = null;
    expect(writer.flush()).toBe('written');
    expect(failing).toHaveLength(2);
    expect(recovered).toEqual([
      { written: 2, droppedBatches: 2, failedForMs: 3_000 },
      { written: 1, droppedBatches: 0, failedForMs: 2_000 },
    ]);
    expect(writer.status().failingSinceMs).toBeNull();
    expect(stored()).toEqual(['change 4', 'change 5']);
    expect((real.db.prepare('SELECT decoder_us AS us FROM edges ORDER BY us').all() as Array<{ us: number }>).map((r) => r.us)).toEqual([3]);
  });

  it('the queue holds 100,000 items by default before it drops the oldest droppable batch', () => {
    const { writer } = harness();
    failure = FULL;
    const noop = () => {};
    for (let i = 0; i < 100_000; i++) writer.commit('edges', noop, { droppable: true });
    expect(writer.status()).toMatchObject({ pending: 100_000, droppedBatches: 0 });
    writer.commit('edges', noop, { droppable: true });
    expect(writer.status()).toMatchObject({ pending: 100_000, droppedBatches: 1 });
  });

  it('a batch size of 0 or less still writes the queue (one item per transaction)', () => {
    const { writer, recovered } = harness({ batchSize: 0 });
    failure = FULL;
    for (let i = 1; i <= 3; i++) writer.commit(`c${i}`, change(i));
    failure = null;
    expect(writer.flush()).toBe('written');
    expect(stored()).toEqual(['change 1', 'change 2', 'change 3']);
    expect(recovered).toEqual([{ written: 3, droppedBatches: 0, failedForMs: 0 }]);
  });

  it('a batch holding a bad item is written one by one; a disk that fails again half-way stops there', () => {
    const { writer, failing } = harness({ batchSize: 10, onRejected: (label) => rejected.push(label) });
    const rejected: string[] = [];
    failure = FULL;
    writer.commit('c1', change(1));
    writer.commit('bad', (s) => void s.audit.insert({ at: T0, actor: 'x', action: 'raise', alarmId: 999, loopId: null, note: null }));
    writer.commit('c2', change(2));
    writer.commit('c3', change(3));
    // The disk takes the batch attempt and c1 alone, then fills again at c2.
    let transactions = 0;
    failure = null;
    flaky.transaction = (fn) => {
      transactions += 1;
      if (transactions >= 4) throw Object.assign(new Error('injected'), FULL);
      return real.transaction(fn);
    };
    expect(writer.flush()).toBe('failing');
    expect(rejected).toEqual(['bad']);
    expect(stored()).toEqual(['change 1']);
    expect(writer.queuedLabels()).toEqual({ c2: 1, c3: 1 });
    expect(failing).toHaveLength(1);
    flaky.transaction = (fn) => real.transaction(fn);
    expect(writer.flush()).toBe('written');
    expect(stored()).toEqual(['change 1', 'change 2', 'change 3']);
  });
});

describe('durable writer: the queue bound after a partial catch-up', () => {
  it('items written one by one still leave the count of droppable batches right, so the bound keeps dropping the oldest edges', () => {
    const rejected: string[] = [];
    const { writer, recovered } = harness({ maxQueued: 3, onRejected: (label) => rejected.push(label) });
    failure = FULL;
    writer.commit('c1', change(1));
    writer.commit('bad', (s) => void s.audit.insert({ at: T0, actor: 'x', action: 'raise', alarmId: 999, loopId: null, note: null }));
    writer.commit('e1', edge(1), { droppable: true });
    // Catch-up: the batch fails on the bad item, then one by one: c1 written, bad rejected, the disk fills at e1.
    failure = null;
    let transactions = 0;
    flaky.transaction = (fn) => {
      transactions += 1;
      if (transactions >= 4) throw Object.assign(new Error('injected'), FULL);
      return real.transaction(fn);
    };
    expect(writer.flush()).toBe('failing');
    expect(rejected).toEqual(['bad']);
    expect(writer.queuedLabels()).toEqual({ e1: 1 });
    writer.commit('e2', edge(2), { droppable: true });
    writer.commit('c3', change(3));
    writer.commit('c4', change(4)); // full (3): e1, the oldest droppable, goes
    expect(writer.queuedLabels()).toEqual({ e2: 1, c3: 1, c4: 1 });
    expect(writer.status().droppedBatches).toBe(1);
    flaky.transaction = (fn) => real.transaction(fn);
    expect(writer.flush()).toBe('written');
    expect(stored()).toEqual(['change 1', 'change 3', 'change 4']);
    expect((real.db.prepare('SELECT decoder_us AS us FROM edges').all() as Array<{ us: number }>).map((r) => r.us)).toEqual([2]);
    // c1 alone, then e2, c3 and c4 as one batch.
    expect(recovered).toEqual([{ written: 4, droppedBatches: 1, failedForMs: 0 }]);
  });
});

describe('durable writer: the file guard and what a stop reports', () => {
  it('a guard refusal holds the work as a failing disk does, named by the label that met it', () => {
    let gone: StorageFailure | null = null;
    const { writer, failing, recovered } = harness({ guard: () => gone });
    expect(writer.commit('c1', change(1))).toBe('written');
    gone = fileGoneFailure('site.db was replaced', 'watch');
    expect(writer.commit('state', change(2))).toBe('queued');
    expect(writer.commit('state', change(3))).toBe('queued');
    writer.commit('edges', edge(1), { droppable: true });
    expect(failing).toEqual([{ ...gone, label: 'state' }]);
    expect(writer.queuedLabels()).toEqual({ state: 2, edges: 1 });
    expect(writer.flush()).toBe('failing');
    // Nothing reached the file while the guard refused.
    expect(stored()).toEqual(['change 1']);
    gone = null;
    expect(writer.flush()).toBe('written');
    expect(writer.queuedLabels()).toEqual({});
    expect(stored()).toEqual(['change 1', 'change 2', 'change 3']);
    expect(recovered).toHaveLength(1);
  });

  it('check() runs the guard: a refusal starts failing and counts as a retry attempt', () => {
    let gone: StorageFailure | null = null;
    const { writer, failing, advance } = harness({ guard: () => gone });
    expect(writer.check()).toBeNull();
    expect(writer.status().failing).toBeNull();
    expect(failing).toEqual([]);

    gone = fileGoneFailure('site.db was deleted', 'watch');
    expect(writer.commit('c1', change(1))).toBe('queued');
    advance(6_000);
    expect(writer.check()).toEqual(gone);
    expect(writer.status().failing).toMatchObject({ kind: 'file-gone' });
    gone = null;
    advance(1_000);
    // 1 s after check()'s attempt, not 7 s after the commit's: no retry yet.
    expect(writer.commit('c2', change(2))).toBe('queued');
    advance(4_000);
    expect(writer.commit('c3', change(3))).toBe('written');
    expect(stored()).toEqual(['change 1', 'change 2', 'change 3']);
  });

  it('check() without a guard is always null', () => {
    const { writer } = harness();
    expect(writer.check()).toBeNull();
    expect(writer.status().failing).toBeNull();
  });

  it('flush never throws, even when the clock it is given does', () => {
    let broken = false;
    const rejected: string[] = [];
    const { writer } = harness({
      onRejected: (label) => rejected.push(label),
      now: () => {
        if (broken) throw new Error('clock gone');
        return T0;
      },
    });
    failure = FULL;
    writer.commit('c1', change(1));
    broken = true;
    expect(writer.flush()).toBe('failing');
    expect(rejected).toEqual(['flush']);
  });
});
