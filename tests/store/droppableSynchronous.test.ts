import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';

/**
 * The writer's promise: droppable-only batches commit with synchronous=NORMAL, and FULL is put back
 * for everyone else, every time. PRAGMA synchronous reads back 1 for NORMAL and 2 for FULL (SQLite
 * documentation, PRAGMA synchronous).
 */
const NORMAL = 1;
const FULL = 2;

describe('synchronous around droppable batches', () => {
  let tmp: TempDir | undefined;
  let store: Store | undefined;
  afterEach(() => {
    store?.close();
    tmp?.cleanup();
  });

  it('NORMAL inside a droppable batch, FULL inside any other and after each, batch after batch', () => {
    tmp = makeTempDir('pairwatch-sync-');
    const opened = openStore({ path: join(tmp.dir, 'site.db') });
    store = opened;
    const writer = createDurableWriter({ store: opened, onFailing() {}, onRecovered() {} });
    const level = () => opened.db.pragma('synchronous', { simple: true });
    const seen: Array<[string, unknown]> = [];
    for (let round = 0; round < 3; round++) {
      expect(writer.commit('edges', () => seen.push(['droppable', level()]), { droppable: true })).toBe('written');
      seen.push(['after droppable', level()]);
      expect(writer.commit('state', () => seen.push(['state', level()]))).toBe('written');
    }
    expect(seen).toEqual(
      Array.from({ length: 3 }, () => [
        ['droppable', NORMAL],
        ['after droppable', FULL],
        ['state', FULL],
      ]).flat(),
    );
  });
});
