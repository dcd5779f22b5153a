import { join } from 'node:path';
import { afterEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { configProblems } from '../helpers/configProblems.js';

/**
 * storage.cache_kib: the config key, its default and its errors, and what the connection ends up
 * with. PRAGMA cache_size reads back a negative number for a size given in KiB (SQLite
 * documentation, PRAGMA cache_size).
 */
const base = (storage: string) => `
site: { name: "Cache Test Croft" }
decoders: [{ id: main, port: /dev/ttyACM0, inputs: 1 }]
loops: [{ id: byre, name: "Byre", decoder: main, input: 1 }]
storage: ${storage}
`;

const problems = (text: string): string[] => configProblems(text);

describe('storage.cache_kib', () => {
  let tmp: TempDir | undefined;
  let store: Store | undefined;
  afterEach(() => {
    store?.close();
    tmp?.cleanup();
  });

  it("defaults to 2048 KiB, SQLite's own default size", () => {
    expect(parseConfig(base('{ path: data/t.db }')).storage.cache_kib).toBe(2048);
    expect(parseConfig(base('{ path: data/t.db, cache_kib: 8192 }')).storage.cache_kib).toBe(8192);
  });

  it('refuses a size that is not a whole number of KiB in range, naming the field', () => {
    for (const bad of ['100', '2048.5', '2000000']) {
      const lines = problems(base(`{ path: data/t.db, cache_kib: ${bad} }`));
      expect(lines.length, bad).toBe(1);
      expect(lines[0], bad).toMatch(/^storage\.cache_kib: .*KiB/);
    }
  });

  it('sets the connection page cache to the configured size', () => {
    tmp = makeTempDir('pairwatch-cache-kib-');
    store = openStore({ path: join(tmp.dir, 'site.db'), cacheKib: 3072 });
    expect(store.db.pragma('cache_size', { simple: true })).toBe(-3072);
  });
});
