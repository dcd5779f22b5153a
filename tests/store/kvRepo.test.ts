import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';

describe('kvRepo', () => {
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

  it('gets, sets, overwrites and deletes', () => {
    expect(store.kv.get('report.last')).toBeNull();
    store.kv.set('report.last', '2026-01-15T07:00:00.000Z');
    store.kv.set('report.last', '2026-01-16T07:00:00.000Z');
    expect(store.kv.get('report.last')).toBe('2026-01-16T07:00:00.000Z');
    store.kv.set('note', 'ünïcode ✓ and "quotes"');
    expect(store.kv.get('note')).toBe('ünïcode ✓ and "quotes"');
    store.kv.delete('report.last');
    expect(store.kv.get('report.last')).toBeNull();
  });
});
