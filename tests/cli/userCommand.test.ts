import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { userCommand } from '../../src/cli/userCommand.js';
import { openDatabase } from '../../src/store/openDatabase.js';
import { findUserByName } from '../../src/store/accountRepos.js';
import { verifyPassword } from '../../src/web/auth/passwordHash.js';
import { makeSite, run } from './accountCommands.fixture.js';

let site: ReturnType<typeof makeSite>;
beforeEach(() => {
  site = makeSite();
});
afterEach(() => site.cleanup());

const user = (args: string[], stdin = '') => run(userCommand, [...args, '--config', site.configFile], stdin);
const lookup = (name: string) => {
  const { db } = openDatabase(site.dbPath);
  try {
    return findUserByName(db, name);
  } finally {
    db.close();
  }
};

describe('pairwatch user', () => {
  it('adds a user with the password from stdin, stored as a salted scrypt hash', async () => {
    const res = await user(['add', 'meg', '--role', 'operator', '--password-stdin'], 'lambing-season-2027\n');
    expect(res).toMatchObject({ code: 0, stdout: 'user "meg" added with the operator role\n' });
    const row = lookup('meg')!;
    expect(row.role).toBe('operator');
    expect(row.passwordHash).toMatch(/^scrypt\$17\$8\$1\$/);
    expect(row.passwordHash).not.toContain('lambing');
    expect(await verifyPassword('lambing-season-2027', { hash: row.passwordHash, salt: row.passwordSalt })).toBe(true);
  });

  it('lists, changes the password and role, and removes', async () => {
    await user(['add', 'meg', '--role', 'viewer', '--password-stdin'], 'first-long-password\n');
    const list = await user(['list']);
    expect(list.stdout).toMatch(/^NAME\s+ROLE\s+CREATED \(UTC\)\nmeg\s+viewer\s+\d{4}-/);
    expect((await user(['passwd', 'meg', '--password-stdin'], 'second-password\n')).code).toBe(0);
    const row = lookup('meg')!;
    expect(await verifyPassword('second-password', { hash: row.passwordHash, salt: row.passwordSalt })).toBe(true);
    expect((await user(['role', 'meg', '--role', 'admin'])).code).toBe(0);
    expect(lookup('meg')!.role).toBe('admin');
    expect((await user(['remove', 'meg'])).code).toBe(0);
    expect(lookup('meg')).toBeNull();
  });

  it('says plainly what is wrong, with exit codes 1 (failed) and 2 (usage)', async () => {
    await user(['add', 'meg', '--role', 'viewer', '--password-stdin'], 'first-long-password\n');
    const cases: Array<[string[], string, number, RegExp]> = [
      [['add', 'meg', '--role', 'viewer', '--password-stdin'], 'another-password\n', 1, /exists already/],
      [['add', 'tom', '--role', 'boss', '--password-stdin'], 'x-long-enough-password\n', 2, /--role "boss" is not one of viewer, operator, admin/],
      [['add', 'tom', '--password-stdin'], 'x-long-enough-password\n', 2, /--role is needed/],
      [['add', 'tom', '--role', 'viewer', '--password-stdin'], 'fourteen-chars\n', 2, /at least 15 characters/],
      [['add', 'tom', '--role', 'viewer'], '', 2, /--password-stdin/],
      [['add', 'mail-link', '--role', 'viewer', '--password-stdin'], 'x-long-enough-password\n', 2, /reserved/],
      [['add', 'bad name', '--role', 'viewer', '--password-stdin'], 'x-long-enough-password\n', 2, /NAME must be/],
      [['passwd', 'ghost', '--password-stdin'], 'x-long-enough-password\n', 1, /no user is named "ghost"/],
      [['remove', 'ghost'], '', 1, /no user is named "ghost"/],
      [['frobnicate'], '', 2, /usage:/],
    ];
    for (const [args, stdin, code, message] of cases) {
      const res = await user(args, stdin);
      expect(res.code, args.join(' ')).toBe(code);
      expect(res.stderr, args.join(' ')).toMatch(message);
      expect(res.stderr, args.join(' ')).not.toMatch(/\n\s+at /);
    }
  });

  it('a bad config file is reported by the config loader, exit 2', async () => {
    const res = await run(userCommand, ['list', '--config', `${site.dir}/missing.yaml`]);
    expect(res.code).toBe(2);
    expect(res.stderr).toContain('cannot read the config file: file not found');
  });
});

describe('password prompt', () => {
  it('asks twice on a terminal without echoing, and refuses a mismatch', async () => {
    const { PassThrough } = await import('node:stream');
    const { readNewPassword } = await import('../../src/cli/userCommand.js');
    const fakeTty = (keys: string[]) => {
      const stdin = Object.assign(new PassThrough(), { isTTY: true, rawModes: [] as boolean[] });
      (stdin as unknown as { setRawMode(on: boolean): void }).setRawMode = (on: boolean) => stdin.rawModes.push(on);
      let echoed = '';
      const stderr = new PassThrough();
      stderr.on('data', (c: Buffer) => (echoed += c.toString()));
      // Feed each line once the prompt for it has been written.
      let next = 0;
      stderr.on('data', () => {
        const line = keys[next++];
        if (line !== undefined) setImmediate(() => stdin.write(line));
      });
      return { io: { stdin, stdout: new PassThrough(), stderr, env: {} }, echoed: () => echoed, stdin };
    };
    const ok = fakeTty(['secret-pw\r', 'secret-pw\r']);
    await expect(readNewPassword(ok.io, false)).resolves.toBe('secret-pw');
    expect(ok.echoed()).not.toContain('secret');
    expect(ok.stdin.rawModes).toEqual([true, false, true, false]);

    const typo = fakeTty(['secret-pw\r', 'secret-pX\r']);
    await expect(readNewPassword(typo.io, false)).rejects.toThrow(/differ/);
  });
});
