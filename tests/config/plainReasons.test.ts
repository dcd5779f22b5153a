import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { checkSurroundings } from '../../src/config/checkSurroundings.js';
import { parseConfig } from '../../src/config/loadConfig.js';
import { useTempDirs } from '../helpers/tempDir.js';
import { configProblems } from '../helpers/configProblems.js';

const tempDir = useTempDirs();

const BASE = {
  site: { name: 'Test farm' },
  decoders: [{ id: 'main', port: '/dev/ttyACM0', inputs: 8 }],
  loops: [{ id: 'well-pit', name: 'Well pit', decoder: 'main', input: 1 }],
  contacts: [{ id: 'office', name: 'Office', email: 'office@example.org' }],
  escalation: { default: { steps: [{ after: '0m', notify: ['office'] }], repeat_every: '30m' } },
  storage: { path: 'data/t.db' },
} as Record<string, unknown>;

/** The config with one value set at a dotted path (`loops.0.input`); YAML is a superset of JSON. */
function withValue(path: string, value: unknown, base: unknown = BASE): string {
  const copy = structuredClone(base) as Record<string, unknown>;
  const keys = path.split('.');
  let here: Record<string, unknown> = copy;
  for (const key of keys.slice(0, -1)) {
    here[key] ??= {};
    here = here[key] as Record<string, unknown>;
  }
  here[keys.at(-1)!] = value;
  return JSON.stringify(copy);
}

const problems = (text: string): string[] => configProblems(text);

/** zod's stock phrases: users must never read these. */
const STOCK = /Invalid input|Too small|Too big|expected (number|string|boolean|array|object|int)|received|Invalid option|Invalid (string|email|url)/;

describe('wrong types are reported as what was expected, never "is required" for a present key', () => {
  it.each([
    ['loops', 'all of them', 'loops: must be a list (lines starting with "- ", or [a, b]), not the text "all of them"'],
    ['loops.0.input', 1.5, 'loops[0].input: must be a whole number from 1 to 64, not 1.5'],
    ['loops.0.input', '2', 'loops[0].input: must be a whole number from 1 to 64, not the text "2"'],
    ['loops.0.latch_alarms', 'yes', 'loops[0].latch_alarms: must be true or false, not the text "yes"'],
    ['decoders.0.silence', true, 'decoders[0].silence: must be a duration such as 90s, 20m or 2h (or a number of milliseconds), not true'],
    ['loops.0.period_ms', [500], 'loops[0].period_ms: must be a number of milliseconds, e.g. 2000 (or a duration such as 2s), not a list'],
    ['site.name', 42, 'site.name: must be text, not 42'],
  ])('%s: %j', (path, value, line) => {
    expect(problems(withValue(path, value))).toEqual([line]);
  });

  it('YAML .nan is named as such', () => {
    expect(problems(withValue('loops.0.input', 0).replace('"input":0', '"input": .nan'))).toEqual(['loops[0].input: must be a whole number from 1 to 64, not .nan (not a number)']);
  });

  it('a key that is really missing is "is required"', () => {
    const noInput = structuredClone(BASE);
    delete (noInput.loops as Array<Record<string, unknown>>)[0]!.input;
    expect(problems(JSON.stringify(noInput))).toEqual(['loops[0].input: is required']);
  });
});

describe('durations: the README forms are accepted, *_ms keys take a duration too', () => {
  it('retention.hourly_quality: 5y (the README default) is accepted', () => {
    const config = parseConfig(withValue('storage.retention', { hourly_quality: '5y' }));
    expect(config.storage.retention.hourly_quality).toBe(5 * 365 * 86_400_000);
  });

  it('trip_ms: 2s means 2000 ms, and pulse_min_ms keeps fractions', () => {
    const config = parseConfig(withValue('loops.0', { id: 'a', name: 'A', decoder: 'main', input: 1, trip_ms: '2s', pulse_min_ms: '0.2ms', period_ms: 500 }));
    expect(config.loops[0]!.trip_ms).toBe(2000);
    expect(config.loops[0]!.pulse_min_ms).toBeCloseTo(0.2, 10);
  });

  it('a *_ms key written as words says what it takes', () => {
    expect(problems(withValue('loops.0.trip_ms', 'soon'))).toEqual(['loops[0].trip_ms: "soon" is not a number of milliseconds (write e.g. 2000, or 2s)']);
  });
});

// Each range rule at its boundaries: [path, lowest accepted, highest refused below, highest accepted, lowest refused above].
// The values are this project's choices (common practice, not a standard), except the TCP port range
// 1–65535 (RFC 793's 16-bit port field; port 0 is not a port a client can connect to) and the TICK
// interval of at most 250 ms from our own protocol, which sets silence's floor at 1 s (four TICKs).
const RANGES: Array<[string, unknown, unknown, unknown, unknown]> = [
  ['decoders.0.silence', '1s', '999ms', '10m', '601s'],
  ['decoders.0.baud', 300, 299, 4_000_000, 4_000_001],
  ['loops.0.period_ms', 10, 9.99, 600_000, 600_001],
  ['loops.0.short_ms', 1, 0.5, 3_600_000, 3_600_001],
  ['loops.0.open_ms', 1, 0, 3_600_000, 3_600_001],
  ['loops.0.healthy_pulses', 1, 0, 20, 21],
  ['loops.0.intermittent_count', 2, 1, 1000, 1001],
  ['loops.0.intermittent_window', '1s', '999ms', '7d', '169h'],
  ['escalation.default.steps.0.after', '0s', -1, '30d', '721h'],
  ['escalation.default.repeat_every', '1s', '999ms', '7d', '169h'],
  ['escalation.default.max_repeats', 0, -1, 1000, 1001],
  ['mail.group_window', '0s', -1, '10m', '601s'],
  ['mail.retry_first', '1s', '999ms', '15m', '3601s'], // up to 1h, and never past retry_max (15m by default)
  ['mail.retry_max', '1h', '999ms', '1d', '25h'],
  ['mail.failing_after', 1, 0, 100, 101],
  ['mail.smtp.port', 1, 0, 65535, 65536],
  ['mail.smtp.timeout', '1s', '999ms', '10m', '601s'],
  ['storage.retention.edges', '10m', '599s', '365d', '366d'],
  ['storage.retention.minute_quality', '1h', '59m', '10y', '3651d'],
  ['storage.retention.hourly_quality', '1d', '23h', '20y', '7301d'],
  ['storage.retention.backups_kept', 0, -1, 365, 366],
  ['web.session_ttl', '5m', '299s', '365d', '366d'],
  ['web.ack_link_ttl', '5m', '299s', '90d', 1e16],
  ['web.max_shelve', '1m', '59s', '30d', '721h'],
  ['web.login_attempts_per_minute', 1, 0, 1000, 1001],
];

describe('every duration and number has a sane range (checked at each boundary)', () => {
  const prepare = (path: string) =>
    path.startsWith('mail.smtp.')
      ? withValue('mail', { from: 'p <p@example.org>', smtp: { host: 'smtp.example.org' } })
      : path === 'loops.0.short_ms'
        ? withValue('loops.0.pulse_max_ms', 0.5) // short_ms must stay above the pulse width (a cross-check)
        : JSON.stringify(BASE);
  it.each(RANGES)('%s', (path, lowOk, lowBad, highOk, highBad) => {
    const base = JSON.parse(prepare(path)) as unknown;
    for (const ok of [lowOk, highOk]) expect(problems(withValue(path, ok, base)), `${path}: ${String(ok)}`).toEqual([]);
    for (const bad of [lowBad, highBad]) {
      const lines = problems(withValue(path, bad, base));
      expect(lines, `${path}: ${String(bad)}`).toHaveLength(1);
      expect(lines[0]).toMatch(/: must be (at least|at most|longer than|a whole number from)/);
      expect(lines[0]).not.toMatch(STOCK);
    }
  });

  it('silence must be above zero: 0 and negative are refused (they made offline/online flap)', () => {
    expect(problems(withValue('decoders.0.silence', 0))).toEqual(['decoders[0].silence: must be at least 1s, not 0s']);
    expect(problems(withValue('decoders.0.silence', -5))).toHaveLength(1);
  });

  it('pulse widths must be above 0 and period_ms: 1e308 is refused', () => {
    expect(problems(withValue('loops.0.pulse_min_ms', 0))[0]).toMatch(/^loops\[0\]\.pulse_min_ms: must be longer than 0 ms/);
    expect(problems(withValue('loops.0.period_ms', 1e308))[0]).toMatch(/^loops\[0\]\.period_ms: must be at most 600000 ms/);
  });

  it('ports 1–65535 in web.listen and in tcp:// decoders; public_url http(s) only', () => {
    expect(problems(withValue('web.listen', '127.0.0.1:99999'))).toEqual(['web.listen: the port must be from 1 to 65535, not 99999']);
    expect(problems(withValue('web.listen', '127.0.0.1:65535'))).toEqual([]);
    expect(problems(withValue('decoders.0.port', 'tcp://192.0.2.7:99999'))).toEqual(['decoders[0].port: the TCP port must be from 1 to 65535, not 99999']);
    expect(problems(withValue('decoders.0.port', 'tcp://192.0.2.7:0'))).toEqual(['decoders[0].port: the TCP port must be from 1 to 65535, not 0']);
    expect(problems(withValue('decoders.0.port', 'tcp://192.0.2.7:1'))).toEqual([]);
    expect(problems(withValue('decoders.0.port', 'tcp://192.0.2.7:65535'))).toEqual([]);
    for (const url of ['javascript:alert(1)', 'ftp://monitor.example.org/', 'file:///etc/passwd']) {
      expect(problems(withValue('web.public_url', url))).toEqual(['web.public_url: must be a full http:// or https:// URL such as https://monitor.example.org']);
    }
    expect(problems(withValue('web.public_url', 'https://monitor.example.org'))).toEqual([]);
    expect(problems(withValue('web.public_url', 'http://192.168.1.5:8080'))).toEqual([]);
  });

  it('retry_first may not exceed retry_max', () => {
    expect(problems(withValue('mail', { from: 'p <p@example.org>', retry_first: '20m', retry_max: '15m' }))).toEqual(['mail.retry_first: must not be longer than retry_max (900000 ms)']);
  });
});

describe('config problems come in one round', () => {
  it('shape errors and cross-reference errors of whatever parsed are reported together', () => {
    const text = JSON.stringify({
      ...BASE,
      decoders: [{ id: 'main', port: '/dev/ttyACM0', inputs: 8 }, { id: 'main', port: '/dev/ttyACM1' }],
      loops: [
        { id: 'well-pit', name: 'Well pit', decoder: 'main', input: 1 },
        { id: 'well-pit', name: 'Again', decoder: 'main', input: 1 },
        { id: 'store', name: 'Store', decoder: 'yard', input: 2 },
        { id: 'barn', name: 'Barn', decoder: 'main', input: 3, period_ms: 'fast' },
      ],
      escalation: { default: { steps: [{ after: '0m', notify: ['office', 'nobody'] }] } },
      report: { notify: ['ghost'] },
      mail: { from: 'pairwatch' },
    });
    const lines = problems(text);
    expect(lines).toEqual(
      expect.arrayContaining([
        'loops[3].period_ms: "fast" is not a number of milliseconds (write e.g. 2000, or 2s)',
        expect.stringMatching(/^mail\.from: /),
        'decoders[1].id: "main" is already used by decoders[0]',
        'loops[1].id: "well-pit" is already used by loops[0]',
        'loops[1].input: input 1 of decoder "main" is already claimed by loops[0] ("well-pit")',
        'loops[2].decoder: no decoder has id "yard"',
        'escalation.default.steps[0].notify[1]: no contact has id "nobody"',
        'report.notify[0]: no contact has id "ghost"',
      ]),
    );
    // A reference to an entry that failed its own checks is not also reported as unknown.
    expect(lines.some((l) => l.includes('no decoder has id "main"'))).toBe(false);
    for (const line of lines) expect(line).not.toMatch(STOCK);
  });

  it('a broken decoder entry does not make its loops "refer to no decoder"', () => {
    const text = JSON.stringify({ ...BASE, decoders: [{ id: 'main', port: 'COMX', inputs: 8 }] });
    expect(problems(text)).toEqual(['decoders[0].port: must be a device path (/dev/…), tcp://host:port, or sim:FILE']);
  });
});

describe('check-config catches what run would refuse', () => {
  it('a storage path that is a folder, missing TLS files and an unset pass_env', () => {
    const dir = tempDir('pw-surround-');
    mkdirSync(join(dir, 'data'));
    writeFileSync(join(dir, 'key.pem'), 'not really a key');
    const config = parseConfig(
      JSON.stringify({
        ...BASE,
        storage: { path: join(dir, 'data') },
        web: { tls: { cert: join(dir, 'missing.pem'), key: join(dir, 'key.pem') } },
        mail: { from: 'p <p@example.org>', smtp: { host: 'smtp.example.org', user: 'm', pass_env: 'PW_TEST_UNSET_PASS' } },
      }),
    );
    const found = checkSurroundings(config, {});
    expect(found.map((p) => p.path)).toEqual(['storage.path', 'web.tls.cert', 'mail.smtp.pass_env']);
    expect(found[0]!.message).toContain('is a folder');
    expect(found[1]!.message).toContain('file not found');
    expect(found[2]!.message).toContain("needs the service's own environment");
    expect(checkSurroundings(config, { PW_TEST_UNSET_PASS: 'x' }).map((p) => p.path)).toEqual(['storage.path', 'web.tls.cert']);
  });
});
