import { readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { dailyBackup, dailyBackupName } from '../../src/store/backup.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';

const DAY = 86_400_000;

describe('dailyBackup', () => {
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

  it('names the file after the calendar day in the site\'s time zone', () => {
    const lateEvening = Date.UTC(2026, 0, 1, 23, 30);
    expect(dailyBackupName(lateEvening)).toBe('pairwatch-20260101.db');
    // New Zealand is UTC+13 in January (daylight time; from memory, resolved here by the IANA database via Intl).
    expect(dailyBackupName(lateEvening, 'Pacific/Auckland')).toBe('pairwatch-20260102.db');
  });

  it('keeps the newest N daily files and touches nothing else in the folder', async () => {
    const dir = join(tmp.dir, 'backups');
    const first = Date.UTC(2026, 1, 20, 3, 0);
    await dailyBackup(store, dir, 3, first); // creates the folder
    writeFileSync(join(dir, 'notes.txt'), 'keep me');
    writeFileSync(join(dir, 'pairwatch-before-upgrade.db'), 'keep me too');
    for (let day = 1; day < 10; day++) {
      store.kv.set('day', String(day));
      await dailyBackup(store, dir, 3, first + day * DAY);
    }
    // Again on the last day: replaces that day's file rather than adding one.
    const last = await dailyBackup(store, dir, 3, first + 9 * DAY + 3_600_000);
    expect(last.removed).toEqual([]);
    expect(readdirSync(dir).sort()).toEqual([
      'notes.txt', 'pairwatch-20260227.db', 'pairwatch-20260228.db', 'pairwatch-20260301.db', 'pairwatch-before-upgrade.db',
    ]);
  });

  it('does nothing when backups_kept is 0', async () => {
    const result = await dailyBackup(store, join(tmp.dir, 'none'), 0, Date.UTC(2026, 1, 1));
    expect(result).toEqual({ backup: null, removed: [] });
  });
});
