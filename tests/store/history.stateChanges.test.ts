import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0 } from './storeTestKit.js';

describe('stateChangeRepo', () => {
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

  it('round-trips, filters by loop and time, and pages by id', () => {
    // Decoder time beyond 2^32 µs: unwrapped values must survive as exact integers.
    const big = 2 ** 32 * 3 + 17;
    const ids = [
      store.stateChanges.insert({ loopId: 'well-pit', from: 'unknown', to: 'healthy', decoderUs: big, at: T0, reason: '3 pulses in period' }),
      store.stateChanges.insert({ loopId: 'dairy', from: 'unknown', to: 'healthy', decoderUs: big + 5, at: T0 + 10, reason: 'pulses' }),
      store.stateChanges.insert({ loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: big + 1_500_000, at: T0 + 1_500, reason: 'no pulse for 1500 ms' }),
      store.stateChanges.insert({ loopId: 'well-pit', from: 'tripped', to: 'offline', decoderUs: null, at: T0 + 9_000, reason: 'decoder silent' }),
    ];
    expect(store.stateChanges.list({ loopId: 'well-pit', limit: 10 })).toEqual([
      { id: ids[0], loopId: 'well-pit', from: 'unknown', to: 'healthy', decoderUs: big, at: T0, reason: '3 pulses in period' },
      { id: ids[2], loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: big + 1_500_000, at: T0 + 1_500, reason: 'no pulse for 1500 ms' },
      { id: ids[3], loopId: 'well-pit', from: 'tripped', to: 'offline', decoderUs: null, at: T0 + 9_000, reason: 'decoder silent' },
    ]);
    expect(store.stateChanges.list({ since: T0 + 10, until: T0 + 9_000, limit: 10 }).map((c) => c.id)).toEqual([ids[1], ids[2]]);
    const first = store.stateChanges.list({ limit: 2 });
    const rest = store.stateChanges.list({ limit: 10, afterId: first[first.length - 1]?.id });
    expect([...first, ...rest].map((c) => c.id)).toEqual(ids);
    expect(store.stateChanges.latestBefore('well-pit', T0 + 2_000)?.to).toBe('tripped');
    expect(store.stateChanges.latestBefore('well-pit', T0)).toBeNull();
  });
});
