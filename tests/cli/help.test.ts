import { describe, expect, it } from 'vitest';
import { main } from '../../src/cli/main.js';
import { captureCliIo } from '../helpers/captureCliIo.js';

async function pairwatch(...argv: string[]) {
  const run = captureCliIo();
  const code = await main(argv, run.io);
  return { code, out: run.out(), err: run.err() };
}

/** The command names under "commands:" in the general help: two spaces, then the name. */
function listedCommands(help: string): string[] {
  const after = help.slice(help.indexOf('commands:\n') + 'commands:\n'.length);
  const names: string[] = [];
  for (const line of after.split('\n')) {
    const match = /^ {2}(\S+)/.exec(line);
    if (!match) break;
    names.push(match[1]!);
  }
  return names;
}

/** Subcommands named in a command's usage lines: `pairwatch user add NAME …` gives `add`. */
function subcommandsIn(name: string, usage: string): string[] {
  const found = new Set<string>();
  for (const match of usage.matchAll(new RegExp(`pairwatch ${name} ([a-z]+)\\b(?! …)`, 'g'))) found.add(match[1]!);
  return [...found];
}

describe('every command answers --help, help CMD and unknown options the same way', () => {
  it('the general help lists every command, and user role among the user subcommands', async () => {
    const help = await pairwatch('--help');
    expect(help.code).toBe(0);
    const names = listedCommands(help.out);
    expect(names).toEqual(expect.arrayContaining(['run', 'demo', 'check-config', 'ports', 'watch', 'sim', 'mail-test', 'user', 'token', 'doctor', 'backup', 'restore']));
    expect(help.out).toContain('user role');
    expect((await pairwatch('help')).out).toBe(help.out);
  });

  it('walks each listed command and subcommand', async () => {
    const names = listedCommands((await pairwatch('--help')).out);
    for (const name of names) {
      const own = await pairwatch(name, '--help');
      expect(own.code, `${name} --help`).toBe(0);
      expect(own.out, `${name} --help`).toMatch(new RegExp(`^usage: pairwatch ${name}\\b`));
      expect(own.err, `${name} --help`).toBe('');
      expect((await pairwatch(name, '-h')).out, `${name} -h`).toBe(own.out);
      const viaHelp = await pairwatch('help', name);
      expect(viaHelp.code, `help ${name}`).toBe(0);
      expect(viaHelp.out, `help ${name}`).toBe(own.out);

      const wrong = await pairwatch(name, '--no-such-option');
      expect(wrong.code, `${name} --no-such-option`).toBe(2);
      const [first, ...rest] = wrong.err.split('\n');
      expect(first, `${name} --no-such-option`).toBe(`pairwatch ${name}: unknown option --no-such-option`);
      expect(rest.join('\n')).toContain(`usage: pairwatch ${name}`);
      expect(wrong.err).not.toMatch(/To specify a positional argument|\n\s+at /);

      for (const sub of subcommandsIn(name, own.out)) {
        const subHelp = await pairwatch(name, sub, '--help');
        expect(subHelp.code, `${name} ${sub} --help`).toBe(0);
        expect(subHelp.out, `${name} ${sub} --help`).toMatch(new RegExp(`^usage: pairwatch ${name} ${sub}\\b`));
        expect((await pairwatch('help', name, sub)).out, `help ${name} ${sub}`).toBe(subHelp.out);
        const subWrong = await pairwatch(name, sub, '--no-such-option');
        expect(subWrong.code).toBe(2);
        expect(subWrong.err.split('\n')[0]).toBe(`pairwatch ${name} ${sub}: unknown option --no-such-option`);
        expect(subWrong.err).toContain(`usage: pairwatch ${name} ${sub}`);
      }
    }
    // The walk reached the subcommands the issue names.
    expect(subcommandsIn('user', (await pairwatch('user', '--help')).out)).toEqual(['add', 'passwd', 'role', 'list', 'remove']);
  });

  it('an unknown command says so with the general usage, exit 2', async () => {
    const res = await pairwatch('frobnicate');
    expect(res.code).toBe(2);
    expect(res.err).toMatch(/^pairwatch: unknown command "frobnicate"\n/);
    expect((await pairwatch('help', 'frobnicate')).code).toBe(2);
  });
});

describe('usage mistakes before the config is read', () => {
  it('user add with no NAME prints the add usage, not a config-file error', async () => {
    const res = await pairwatch('user', 'add', '--config', '/nonexistent/site.yaml');
    expect(res.code).toBe(2);
    expect(res.err).toContain('pairwatch user add: a user NAME is needed');
    expect(res.err).toContain('usage: pairwatch user add NAME');
    expect(res.err).not.toContain('cannot read the config file');
  });
});
