import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { EdgeRow } from '../../src/store/edgeRepo.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0 } from './storeTestKit.js';

describe('edgeRepo', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let store: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    store = openStore({ path: join(tmp.dir, 'pw.db') });
  });
  afterEach(() => {
    store.close();
    tmp.cleanup();
  });

  it('inserts a batch inside the caller\'s transaction and reads it back', () => {
    // A 1 ms heartbeat every 500 ms: N→H then H→N 1000 µs later, per pulse (common practice for this kind of loop).
    const rows: EdgeRow[] = [];
    for (let pulse = 0; pulse < 50; pulse++) {
      const us = 4_294_000_000 + pulse * 500_000; // straddles the 32-bit wrap once unwrapped
      rows.push({ decoderId: 'office', input: 2, band: 'H', decoderUs: us, at: T0 + pulse * 500 });
      rows.push({ decoderId: 'office', input: 2, band: 'N', decoderUs: us + 1_000, at: T0 + pulse * 500 + 1 });
    }
    store.transaction(() => store.edges.insertMany(rows));
    expect(store.edges.count()).toBe(100);
    const back = store.edges.list({ decoderId: 'office', input: 2, limit: 1000 });
    expect(back.map(({ id: _id, ...row }) => row)).toEqual(rows);
    expect(store.edges.list({ since: T0 + 500, until: T0 + 1_000, limit: 10 }).map((e) => e.band)).toEqual(['H', 'N']);
  });

  it('leaves nothing behind when the caller\'s transaction fails', () => {
    const row: EdgeRow = { decoderId: 'office', input: 1, band: 'O', decoderUs: 1, at: T0 };
    expect(() =>
      store.transaction(() => {
        store.edges.insertMany([row, row]);
        throw new Error('batch abandoned');
      }),
    ).toThrow('batch abandoned');
    expect(store.edges.count()).toBe(0);
  });
});
