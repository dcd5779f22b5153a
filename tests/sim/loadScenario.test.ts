import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadScenario, parseScenario } from '../../src/sim/loadScenario.js';
import { ScenarioError } from '../../src/sim/scenarioError.js';
import { useTempDirs } from '../helpers/tempDir.js';

const tempDir = useTempDirs();

function problems(text: string): string[] {
  try {
    parseScenario(text, 'test.yaml');
  } catch (err) {
    expect(err).toBeInstanceOf(ScenarioError);
    return (err as ScenarioError).lines();
  }
  throw new Error('expected the scenario to be refused');
}

const BASE = `decoder: { inputs: 4 }\nloops:\n  - { input: 1, period_ms: 500, pulse_ms: 1 }\n`;

describe('scenario files', () => {
  it('reads the demo scenario with durations in ms', () => {
    const scenario = loadScenario(new URL('../../config/demo.scenario.yaml', import.meta.url).pathname);
    expect(scenario.decoder.inputs).toBe(8);
    expect(scenario.loops.map((l) => l.input)).toEqual([1, 2, 3, 4, 5, 6]);
    expect(scenario.events.map((e) => [e.at, e.action, 'input' in e ? e.input : null])).toEqual([
      [25_000, 'cut', 2],
      [40_000, 'freeze', 3],
      [70_000, 'repair', 2],
      [360_000, 'thaw', 3],
    ]);
  });

  it('fills defaults', () => {
    const scenario = parseScenario(BASE);
    expect(scenario.seed).toBe(1);
    expect(scenario.decoder).toMatchObject({ tick_ms: 200, firmware: 'sim-1' });
    expect(scenario.loops[0]!.jitter).toBe(0);
  });

  it('names an unknown key', () => {
    expect(problems(`${BASE}sede: 4\n`)).toEqual(['sede: unknown key']);
    expect(problems(`decoder: { inputs: 4, tick: 5 }\n`)).toContain('decoder.tick: unknown key');
  });

  it('names a bad duration, a missing field and an unknown action', () => {
    expect(problems(`${BASE}events:\n  - { at: soon, action: cut, input: 1 }\n`)).toEqual(['events[0].at: "soon" is not a duration (write e.g. 90s, 20m, 2h)']);
    expect(problems(`${BASE}events:\n  - { at: 5s, action: cut }\n`)).toEqual(['events[0].input: is required']);
    const unknown = problems(`${BASE}events:\n  - { at: 5s, action: explode, input: 1 }\n`);
    expect(unknown).toHaveLength(1);
    expect(unknown[0]).toMatch(/^events\[0\]\.action: /);
    expect(problems('loops: []\n')).toEqual(['decoder: is required']);
  });

  it('refuses inputs past the decoder, inputs used twice, events on unwired inputs, pulses too long', () => {
    const text = `decoder: { inputs: 2 }
loops:
  - { input: 1 }
  - { input: 3 }
  - { input: 1 }
  - { input: 2, period_ms: 10, pulse_ms: 10 }
events:
  - { at: 1s, action: freeze, input: 4 }
`;
    expect(problems(text)).toEqual([
      `loops[1].input: 3 is past the decoder's 2 inputs`,
      'loops[2].input: input 1 is already used by loops[0]',
      'loops[3].pulse_ms: must be shorter than the shortest interval (10 ms)',
      'events[0].input: no loop is on input 4',
    ]);
  });

  it('reports YAML errors with their place, and files it cannot read', () => {
    expect(problems('decoder: { inputs: 4\n')[0]).toMatch(/^line \d+, column \d+: YAML: /);
    expect(problems('- just a list\n')).toEqual(['the file must be a YAML mapping (keys decoder:, loops:, events:)']);
    const dir = tempDir('pw-scn-');
    expect(() => loadScenario(join(dir, 'missing.yaml'))).toThrow(/cannot read the scenario file: file not found/);
    writeFileSync(join(dir, 'ok.yaml'), BASE);
    expect(loadScenario(join(dir, 'ok.yaml')).loops).toHaveLength(1);
  });
});

describe('scenario files refuse YAML tricks plainly', () => {
  const refuse = (text: string): string[] => {
    try {
      parseScenario(text, 's.yaml');
    } catch (err) {
      if (err instanceof ScenarioError) return err.lines();
      throw err;
    }
    throw new Error('accepted');
  };
  it('an undefined alias, an alias bomb and !!binary are ScenarioErrors with one short line each', () => {
    expect(refuse('decoder: *nowhere\n')).toEqual([expect.stringMatching(/^YAML: .*alias.*anchors \(&name\) and aliases \(\*name\)$/)]);
    const bomb = ['a: &a [1, 1, 1, 1, 1, 1, 1, 1, 1, 1]', 'b: &b [*a, *a, *a, *a, *a, *a, *a, *a, *a, *a]', 'c: &c [*b, *b, *b, *b, *b, *b, *b, *b, *b, *b]', 'd: [*c, *c, *c, *c, *c, *c, *c, *c, *c, *c]', 'decoder: { inputs: 2 }'].join('\n');
    expect(refuse(bomb)).toHaveLength(1);
    expect(refuse('decoder: !!binary aGk=\n')).toEqual([expect.stringMatching(/^line 1, column 10: YAML: Unresolved tag/)]);
  });
});
