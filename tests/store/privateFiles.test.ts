import { chmodSync, mkdirSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import { backupFileTo, backupTo, dailyBackup } from '../../src/store/backup.js';
import { openDatabase } from '../../src/store/openDatabase.js';
import { openStore } from '../../src/store/openStore.js';
import { makePrivateDir, makePrivateFile } from '../../src/store/privateFiles.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';

/**
 * Files holding the site's secrets are owner-only whatever the umask (issue 9): the rule is tested
 * under every umask from the permissive 000 and the usual 022 to the odd 0277 (which would even take
 * the owner's own write bit at creation).
 */
const UMASKS = [0o000, 0o002, 0o022, 0o027, 0o077, 0o277] as const;
const mode = (path: string) => statSync(path).mode & 0o777;

let saved: number;
let tmp: TempDir;
beforeAll(() => {
  saved = process.umask();
});
afterAll(() => {
  process.umask(saved);
});
afterEach(() => {
  process.umask(saved);
  tmp?.cleanup();
});

describe.each(UMASKS)('under umask %o', (umask) => {
  it('the database, its -wal and -shm and its new folders are 0600 / 0700', () => {
    tmp = makeTempDir('pw-modes-');
    process.umask(umask);
    const path = join(tmp.dir, 'var', 'data', 'site.db');
    const { db } = openDatabase(path);
    db.prepare("INSERT INTO kv (key, value) VALUES ('k', 'v')").run();
    try {
      for (const file of [path, `${path}-wal`, `${path}-shm`]) expect(mode(file), file).toBe(0o600);
      expect(mode(join(tmp.dir, 'var'))).toBe(0o700);
      expect(mode(join(tmp.dir, 'var', 'data'))).toBe(0o700);
    } finally {
      db.close();
    }
  });

  it('an existing world-readable database (an older version made it) is tightened on open', () => {
    tmp = makeTempDir('pw-modes-');
    const path = join(tmp.dir, 'site.db');
    process.umask(0);
    openDatabase(path).db.close();
    writeFileSync(`${path}-shm`, '');
    chmodSync(path, 0o644);
    chmodSync(`${path}-shm`, 0o666);
    process.umask(umask);
    openDatabase(path).db.close();
    expect(mode(path)).toBe(0o600);
  });

  it('backups (`pairwatch backup` and the daily ones) and pre-migration copies are 0600 in 0700 folders', async () => {
    tmp = makeTempDir('pw-modes-');
    process.umask(umask);
    const dbPath = join(tmp.dir, 'data', 'site.db');
    const store = openStore({ path: dbPath });
    try {
      const one = await backupTo(store, join(tmp.dir, 'copies', 'one.db'));
      expect(mode(one.file)).toBe(0o600);
      expect(mode(join(tmp.dir, 'copies'))).toBe(0o700);
      const daily = await dailyBackup(store, join(tmp.dir, 'daily'), 3, Date.UTC(2026, 0, 1));
      expect(mode(daily.backup!.file)).toBe(0o600);
      expect(mode(join(tmp.dir, 'daily'))).toBe(0o700);
    } finally {
      store.close();
    }
    const cli = await backupFileTo(dbPath, join(tmp.dir, 'out', 'cli.db'));
    expect(mode(cli.file)).toBe(0o600);
  });

  it('makePrivateFile / makePrivateDir set the modes on fresh and existing paths', () => {
    tmp = makeTempDir('pw-modes-');
    process.umask(umask);
    const dir = join(tmp.dir, 'a', 'b');
    makePrivateDir(dir);
    expect([mode(join(tmp.dir, 'a')), mode(dir)]).toEqual([0o700, 0o700]);
    const file = join(dir, 'x');
    makePrivateFile(file);
    expect(mode(file)).toBe(0o600);
    // A folder that already existed keeps the mode its owner chose.
    mkdirSync(join(tmp.dir, 'mine'), { mode: 0o755 });
    process.umask(0);
    chmodSync(join(tmp.dir, 'mine'), 0o755);
    makePrivateDir(join(tmp.dir, 'mine'));
    expect(mode(join(tmp.dir, 'mine'))).toBe(0o755);
  });
});
