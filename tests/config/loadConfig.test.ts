import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { ConfigError } from '../../src/config/configError.js';
import { loadConfig, parseConfig } from '../../src/config/loadConfig.js';
import { configProblems } from '../helpers/configProblems.js';

const base = `
site: { name: "Test farm" }
decoders:
  - { id: main, port: /dev/ttyACM0, inputs: 8 }
loops:
  - { id: well-pit, name: "Well pit", decoder: main, input: 1 }
storage: { path: data/t.db }
`;

const problems = (text: string): string[] => configProblems(text);

describe('config loading', () => {
  it('fills the documented defaults', () => {
    const config = parseConfig(base);
    const loop = config.loops[0]!;
    expect(loop.period_ms).toBe(500);
    expect(loop.short_ms).toBe(200);
    expect(loop.open_ms).toBe(200);
    expect(loop.latch_alarms).toBe(true);
    expect(loop.latch_trouble).toBe(false);
    expect(config.decoders[0]!.baud).toBe(250000); // the decoder firmware's exact U2X rate (README, "The decoder firmware")
    expect(config.decoders[0]!.silence).toBe(2000);
    expect(config.mail.group_window).toBe(10_000);
    expect(config.storage.retention.edges).toBe(6 * 3600_000);
    expect(config.web.max_shelve).toBe(24 * 3600_000);
  });

  it('reads durations such as 90s, 20m, 2h', () => {
    const config = parseConfig(`${base}
contacts: [{ id: office, name: Office, email: office@example.org }]
escalation:
  default:
    steps: [{ after: 0m, notify: [office] }, { after: 90s, notify: [office] }, { after: 2h, notify: [office] }]
    repeat_every: 30m
`);
    expect(config.escalation.default!.steps.map((s) => s.after)).toEqual([0, 90_000, 7_200_000]);
    expect(config.escalation.default!.repeat_every).toBe(1_800_000);
  });

  it('names the field and the reason for an input past the decoder', () => {
    const text = base.replace('input: 1 }', 'input: 1 }\n  - { id: b, name: B, decoder: main, input: 2 }\n  - { id: c, name: C, decoder: main, input: 9 }');
    expect(problems(text)).toContain(`loops[2].input: 9 is past decoder "main"'s 8 inputs`);
  });

  it('refuses unknown keys, duplicate ids, inputs claimed twice and a decoder with no loops', () => {
    expect(problems(base.replace('inputs: 8 }', 'inputs: 8, bauds: 9600 }'))).toEqual(['decoders[0].bauds: unknown key']);
    const dup = base.replace('input: 1 }', 'input: 1 }\n  - { id: well-pit, name: "Again", decoder: main, input: 1 }');
    expect(problems(dup)).toEqual([
      'loops[1].id: "well-pit" is already used by loops[0]',
      'loops[1].input: input 1 of decoder "main" is already claimed by loops[0] ("well-pit")',
    ]);
    const lonely = base.replace('inputs: 8 }', 'inputs: 8 }\n  - { id: spare, port: /dev/ttyACM1 }');
    expect(problems(lonely)).toEqual(['decoders[1]: decoder "spare" has no loops']);
  });

  it('reports a missing required key, bad values and unknown references in plain words', () => {
    expect(problems(base.replace('storage: { path: data/t.db }', ''))).toEqual(['storage: is required']);
    expect(problems(`${base}\nescalation: { default: { steps: [{ after: soon, notify: [nobody] }] } }`)).toEqual([
      'escalation.default.steps[0].after: "soon" is not a duration (write e.g. 90s, 20m, 2h)',
    ]);
    expect(problems(`${base}\nescalation: { default: { steps: [{ after: 1m, notify: [nobody] }] } }`)).toEqual([
      'escalation.default.steps[0].notify[0]: no contact has id "nobody"',
    ]);
  });

  it('turns broken YAML and unreadable files into a ConfigError, never a raw exception', () => {
    expect(problems('site: [unclosed')[0]).toMatch(/^line 1, column \d+: YAML: /);
    expect(() => loadConfig('/nonexistent/site.yaml')).toThrow(ConfigError);
    expect(problems('- just\n- a list')).toEqual(['the file must be a YAML mapping (keys such as site:, decoders:, loops:)']);
  });

  it('accepts the shipped example and demo configs', () => {
    expect(() => loadConfig('config/example.yaml')).not.toThrow();
    expect(() => loadConfig('config/demo.yaml')).not.toThrow();
    expect(readFileSync('config/demo.yaml', 'utf8')).toContain('sim:');
  });
});

describe('config loading refuses YAML tricks plainly', () => {
  it('an undefined alias, an alias bomb and YAML 1.1 tags are ConfigErrors, not exceptions', () => {
    expect(problems('site: *nowhere\n')[0]).toMatch(/YAML: /);
    const bomb = ['a: &a [x, x, x, x, x, x, x, x, x, x]', ...Array.from({ length: 8 }, (_, i) => `${String.fromCharCode(98 + i)}: &${String.fromCharCode(98 + i)} [*${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}, *${String.fromCharCode(97 + i)}]`)].join('\n');
    expect(problems(bomb)[0]).toMatch(/YAML: .*alias/i);
    expect(problems(`${base}\nweb: !!binary aGVsbG8=\n`)).toEqual([expect.stringMatching(/^line \d+, column \d+: YAML: Unresolved tag: tag:yaml.org,2002:binary/)]);
  });
});
