import { spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import fc from 'fast-check';
import { beforeAll, describe, expect, it } from 'vitest';
import { ConfigError } from '../../src/config/configError.js';
import { parseConfig } from '../../src/config/loadConfig.js';
import { useTempDirs } from '../helpers/tempDir.js';
import { FULL_SITE_YAML } from './fixtures/fullSiteYaml.js';
import { privateBuild } from './fixtures/privateBuild.js';

/**
 * A config file mangled every way a person (or an editor, or a half-finished copy) can mangle it:
 * lines lost, doubled or re-indented, characters changed, values of the wrong kind, unknown keys,
 * YAML's own features (anchors, aliases, tags) misused. Whatever the damage, the loader answers with
 * a ConfigError whose every line names where and why (`path: reason`) — never another exception,
 * never a stack trace. fast-check with a fixed seed: the same 400 mutants every run.
 */
const SEED = 60_601;
const RUNS = 400;
const STACK_LINE = /^\s+at .+/m;

type Mutation = (text: string) => string;

const lines = (text: string) => text.split('\n');
const pickLine = (text: string, n: number) => n % Math.max(1, lines(text).length);

const YAML_PUNCTUATION = [':', '{', '}', '[', ']', '-', '#', '"', "'", '!', '|', '>', '\t', ' ', '\n', '%', '@', '`', ',', '?', '\\', '\u00a0', '\u2028', '\ufeff', 'é', '🐑'];
const ODD_SCALARS = ['', '~', 'null', '-1', '0', '1e309', '.inf', '-.inf', '.nan', 'true', 'no', '0x1F', '0o17', '"90x"', '-5s', '0m', '99999999999999999999', '[]', '{}', '[1, 2]', '{ a: 1 }', '"x"', "'", '!!binary aGVsbG8=', '!!str', `"${'w'.repeat(300)}"`, '2026-01-01', '12:30', '"\\u0000"'];
const KEYS = ['site', 'name', 'decoders', 'id', 'port', 'loops', 'input', 'decoder', 'contacts', 'email', 'escalation', 'steps', 'after', 'notify', 'mail', 'smtp', 'storage', 'path', 'web', 'listen', 'report', 'at'];

const mutation: fc.Arbitrary<Mutation> = fc.oneof(
  // A line lost or doubled.
  fc.nat().map((n) => (t: string) => lines(t).filter((_, i) => i !== pickLine(t, n)).join('\n')),
  fc.nat().map((n) => (t: string) => lines(t).flatMap((l, i) => (i === pickLine(t, n) ? [l, l] : [l])).join('\n')),
  // Indentation shifted by a few spaces either way.
  fc.tuple(fc.nat(), fc.integer({ min: -4, max: 4 })).map(([n, d]) => (t: string) =>
    lines(t).map((l, i) => (i === pickLine(t, n) ? (d >= 0 ? ' '.repeat(d) + l : l.slice(Math.min(-d, l.length - l.trimStart().length))) : l)).join('\n'),
  ),
  // One character replaced by YAML punctuation, odd whitespace or any character at all.
  fc.tuple(fc.nat(), fc.oneof(fc.constantFrom(...YAML_PUNCTUATION), fc.string({ unit: 'binary', minLength: 1, maxLength: 1 }))).map(
    ([n, c]) => (t: string) => { const at = n % Math.max(1, t.length); return t.slice(0, at) + c + t.slice(at + 1); },
  ),
  // Random text inserted anywhere.
  fc.tuple(fc.nat(), fc.string({ unit: 'binary', maxLength: 12 })).map(([n, s]) => (t: string) => { const at = n % (t.length + 1); return t.slice(0, at) + s + t.slice(at); }),
  // A value replaced by one of the wrong kind.
  fc.tuple(fc.nat(), fc.constantFrom(...ODD_SCALARS)).map(([n, v]) => (t: string) =>
    lines(t).map((l, i) => (i === pickLine(t, n) && /:\s*\S/.test(l) ? l.replace(/:\s*(.*)$/, `: ${v}`) : l)).join('\n'),
  ),
  // An unknown or misspelt key beside an existing one.
  fc.tuple(fc.nat(), fc.constantFrom(...KEYS), fc.constantFrom('', 's', '_', 'X')).map(([n, k, suffix]) => (t: string) =>
    lines(t).flatMap((l, i) => (i === pickLine(t, n) ? [l, `${l.match(/^\s*(- )?/)![0].replace('-', ' ')}${k}${suffix}: 1`] : [l])).join('\n'),
  ),
  // A key renamed.
  fc.tuple(fc.nat(), fc.constantFrom(...KEYS)).map(([n, k]) => (t: string) =>
    lines(t).map((l, i) => (i === pickLine(t, n) ? l.replace(/^(\s*(?:- )?)[A-Za-z_]+:/, `$1${k}:`) : l)).join('\n'),
  ),
  // Cut off part-way (a copy that did not finish).
  fc.nat().map((n) => (t: string) => t.slice(0, n % (t.length + 1))),
);

/** Every line of a ConfigError names a place and a reason, on one line, with no stack in it. */
function expectClearConfigError(err: unknown, text: string): void {
  if (!(err instanceof ConfigError)) {
    throw new Error(`not a ConfigError but ${(err as Error)?.constructor?.name}: ${(err as Error)?.message}\n--- config ---\n${text}`);
  }
  expect(err.code).toBe('PW_CONFIG_INVALID');
  expect(err.problems.length).toBeGreaterThan(0);
  for (const problem of err.problems) {
    expect(problem.message.trim(), `reason for ${problem.path}`).not.toBe('');
    expect(problem.message).not.toMatch(STACK_LINE);
    expect(problem.message).not.toContain('\n');
    // Only a whole-file problem (not a YAML mapping at all) has no path of its own.
    if (problem.path.trim() === '') expect(problem.message).toMatch(/file/);
  }
  expect(err.lines()).toEqual(err.problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message)));
}

describe('config fuzzed: every mistake is a clear ConfigError', () => {
  it('the unmutated seed is a valid config (so every error below comes from a mutation)', () => {
    const config = parseConfig(FULL_SITE_YAML);
    expect(config.loops).toHaveLength(5);
  });

  it(`${RUNS} mutants of a valid file (1–3 mutations each) load or fail with "path: reason" lines only`, () => {
    let failures = 0;
    fc.assert(
      fc.property(fc.array(mutation, { minLength: 1, maxLength: 3 }), (mutations) => {
        const text = mutations.reduce((t, m) => m(t), FULL_SITE_YAML);
        try {
          parseConfig(text, 'fellside.yaml');
        } catch (err) {
          failures += 1;
          expectClearConfigError(err, text);
        }
      }),
      { seed: SEED, numRuns: RUNS },
    );
    // Most mutants really are broken; otherwise this would test little.
    expect(failures).toBeGreaterThan(RUNS / 2);
  });

  // YAML's anchors and aliases, and tags, have named cases of their own: the property above leaves
  // them out so that what it guards stays green while these are open.
  it.each([
    ['an alias to an anchor never set', FULL_SITE_YAML.replace('name: "Fellside Lambing Co."', 'name: *site_name')],
    ['an alias used before its anchor', FULL_SITE_YAML.replace('    name: "Barn decoder"', '    name: *later').replace('    name: "Lambing shed"', '    name: &later "Lambing shed"')],
    ['an alias bomb (nested aliases expanding to millions of nodes)', `bomb: &a [x, x, x, x, x, x, x, x, x, x]\nb2: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a, *a]\nb3: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b, *b]\nb4: [*c, *c, *c, *c, *c, *c, *c, *c, *c, *c]\n${FULL_SITE_YAML}`],
    ['binary data where a mapping belongs', FULL_SITE_YAML.replace(/^storage:\n {2}path: data\/fellside.db/m, 'storage: !!binary aGVsbG8=\nstorage_was:\n  path: data/fellside.db')],
    ['a tab for indentation', FULL_SITE_YAML.replace('  name: "Fellside Lambing Co."', '\tname: "Fellside Lambing Co."')],
    ['the same key twice', FULL_SITE_YAML.replace('  timezone: Europe/Dublin', '  timezone: Europe/Dublin\n  timezone: Europe/London')],
    ['an empty file', ''],
    ['a list instead of a mapping', '- site\n- loops\n'],
  ])('%s', (_label, text) => {
    let thrown: unknown = null;
    try {
      parseConfig(text, 'fellside.yaml');
    } catch (err) {
      thrown = err;
    }
    expect(thrown, 'the file was accepted').not.toBeNull();
    expectClearConfigError(thrown, text);
    // A handful of lines a person can read, not a dump of some object's insides.
    expect((thrown as ConfigError).problems.length).toBeLessThanOrEqual(20);
  });
});

describe('pairwatch check-config as a child process, on damaged files', () => {
  const tempDir = useTempDirs();
  let dir: string;
  let cli: string;
  beforeAll(() => {
    cli = privateBuild().cli;
    dir = tempDir('pw-faults-config-');
  }, 120_000);

  const damaged: Array<[string, string]> = [
    ['unknown key', FULL_SITE_YAML.replace('    baud: 115200', '    baud: 115200\n    parity: even')],
    ['wrong type', FULL_SITE_YAML.replace('max_repeats: 10', 'max_repeats: lots')],
    ['broken YAML', FULL_SITE_YAML.replace('loops:\n', 'loops: [\n')],
    ['cut short', FULL_SITE_YAML.slice(0, 700)],
    ['an undefined alias', FULL_SITE_YAML.replace('name: "Fellside Lambing Co."', 'name: *site_name')],
    ['not YAML at all', '\u0000\u0001\u0002 binary junk \uffff'],
  ];

  it.each(damaged)('%s: exit 2, one "FILE: path: reason" line per problem, no stack trace', (label, text) => {
    const file = join(dir, `${label.replace(/\W+/g, '-')}.yaml`);
    writeFileSync(file, text);
    const result = spawnSync(process.execPath, [cli, 'check-config', file], { encoding: 'utf8', timeout: 20_000 });
    expect(result.stderr).not.toMatch(STACK_LINE);
    expect(result.status, result.stderr).toBe(2);
    const errorLines = result.stderr.trim().split('\n');
    expect(errorLines.length).toBeGreaterThan(0);
    for (const line of errorLines) expect(line.startsWith(`${file}: `), line).toBe(true);
    expect(result.stdout).toBe('');
  });
});
