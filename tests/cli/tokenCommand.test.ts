import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { tokenCommand } from '../../src/cli/tokenCommand.js';
import { openDatabase } from '../../src/store/openDatabase.js';
import { findLiveApiTokenByHash } from '../../src/store/accountRepos.js';
import { sha256Hex } from '../../src/web/auth/secretToken.js';
import { makeSite, run } from './accountCommands.fixture.js';

let site: ReturnType<typeof makeSite>;
beforeEach(() => {
  site = makeSite();
});
afterEach(() => site.cleanup());

const token = (args: string[]) => run(tokenCommand, [...args, '--config', site.configFile]);
const live = (value: string) => {
  const { db } = openDatabase(site.dbPath);
  try {
    return findLiveApiTokenByHash(db, sha256Hex(value));
  } finally {
    db.close();
  }
};

describe('pairwatch token', () => {
  it('creates a token, prints it once on stdout, and stores only its hash', async () => {
    const res = await token(['create', 'weather-station', '--role', 'operator']);
    expect(res.code).toBe(0);
    const value = res.stdout.trim();
    expect(value).toMatch(/^pwt_[A-Za-z0-9_-]{43}$/);
    expect(res.stderr).toContain('shown only this once');
    expect(live(value)).toMatchObject({ name: 'weather-station', role: 'operator' });
    const { db } = openDatabase(site.dbPath);
    const stored = db.prepare('SELECT token_hash FROM api_tokens').all() as Array<{ token_hash: string }>;
    db.close();
    expect(stored.map((r) => r.token_hash)).toEqual([sha256Hex(value)]);
    const list = await token(['list']);
    expect(list.stdout).toMatch(/weather-station\s+operator\s+\S+\s+live/);
    expect(list.stdout).not.toContain(value);
  });

  it('defaults to the viewer role; revoke stops it; names stay taken', async () => {
    const value = (await token(['create', 'dashboard'])).stdout.trim();
    expect(live(value)?.role).toBe('viewer');
    expect((await token(['revoke', 'dashboard'])).code).toBe(0);
    expect(live(value)).toBeNull();
    expect((await token(['list'])).stdout).toMatch(/dashboard\s+viewer\s+\S+\s+revoked /);
    const again = await token(['create', 'dashboard']);
    expect(again.code).toBe(1);
    expect(again.stderr).toContain('revoked token');
    const twice = await token(['revoke', 'dashboard']);
    expect(twice.code).toBe(1);
    expect(twice.stderr).toContain('revoked already');
  });

  it('refuses bad usage with exit 2', async () => {
    expect((await token(['create'])).code).toBe(2);
    expect((await token(['create', 'x', '--role', 'root'])).stderr).toContain('--role "root" is not one of');
    expect((await token(['revoke', 'nobody'])).code).toBe(1);
  });
});
