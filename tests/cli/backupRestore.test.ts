import { existsSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { backupCommand } from '../../src/cli/backupCommand.js';
import { checkConfigCommand } from '../../src/cli/checkConfigCommand.js';
import { restoreCommand } from '../../src/cli/restoreCommand.js';
import { openStore } from '../../src/store/openStore.js';
import { makeSite, run } from './accountCommands.fixture.js';

const site = makeSite();
afterAll(() => site.cleanup());

describe('backup and restore odds and ends', () => {
  it('backup FILE refuses to replace an existing file without --force', async () => {
    openStore({ path: site.dbPath, lock: false }).close();
    const target = join(site.dir, 'copy.db');
    writeFileSync(target, 'precious');
    const refused = await run(backupCommand, [target, '--config', site.configFile]);
    expect(refused.code).toBe(1);
    expect(refused.stderr).toContain('exists already; nothing was written');
    expect(readFileSync(target, 'utf8')).toBe('precious');
    const forced = await run(backupCommand, [target, '--force', '--config', site.configFile]);
    expect(forced.code).toBe(0);
    expect(readFileSync(target).subarray(0, 15).toString()).toBe('SQLite format 3');
  });

  it('restore while the monitor runs says to stop the service, not "daemon"', async () => {
    const backup = join(site.dir, 'copy.db');
    expect(existsSync(backup)).toBe(true);
    const running = openStore({ path: site.dbPath });
    try {
      const res = await run(restoreCommand, [backup, '--config', site.configFile]);
      expect(res.code).toBe(1);
      expect(res.stderr).toContain('systemctl stop pairwatch');
      expect(res.stderr).not.toContain('daemon');
    } finally {
      running.close();
    }
  });

  it('check-config with no file and no config/site.yaml suggests copying config/example.yaml', async () => {
    const cwd = process.cwd();
    process.chdir(site.dir);
    try {
      const res = await run(checkConfigCommand, []);
      expect(res.code).toBe(2);
      expect(res.stderr).toContain('cp config/example.yaml config/site.yaml');
    } finally {
      process.chdir(cwd);
    }
  });
});
