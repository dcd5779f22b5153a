import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { initialAlarmBook, stepAlarms, type AlarmBook } from '../../src/alarms/alarmEngine.js';
import type { AlarmInput } from '../../src/alarms/alarmInput.js';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import { MIN, T0, issueContext } from './alarmFixtures.js';

/**
 * The README's "Escalation timetable" is the specification: its worked examples are read from the
 * README itself and every row is checked against the alarm engine and its escalation planner, so the
 * documentation and the code cannot drift apart. The policy is the README's example policy, which is
 * also the one in alarmFixtures (office at 0, oncall at 20 min, every 30 min, at most 10 repeats).
 */
const README = readFileSync(fileURLToPath(new URL('../../README.md', import.meta.url)), 'utf8');

interface Row {
  minute: number;
  input: 'raise' | 'clear' | 'ack' | 'tick';
  told: Record<string, string[]>;
}
interface Example {
  title: string;
  condition: 'tripped' | 'open';
  latched: boolean;
  rows: Row[];
}

function parseTold(cell: string): Record<string, string[]> {
  const told: Record<string, string[]> = {};
  if (cell === '—') return told;
  for (const part of cell.split(';')) {
    const [who, kind] = part.split(':').map((x) => x.trim());
    if (!who || !kind) throw new Error(`README timetable: cannot read "${cell}"`);
    for (const contact of who.split(',').map((x) => x.trim())) (told[contact] ??= []).push(kind);
  }
  return told;
}

function readExamples(): Example[] {
  const start = README.indexOf('### Escalation timetable');
  expect(start, 'README has an "Escalation timetable" section').toBeGreaterThan(0);
  const end = README.indexOf('\n## ', start);
  const section = README.slice(start, end);
  const examples: Example[] = [];
  for (const block of section.split('\n**Example: ').slice(1)) {
    const [head = '', ...lines] = block.split('\n');
    const condition = /Condition `(tripped|open)`/.exec(head)?.[1] as Example['condition'] | undefined;
    if (!condition) throw new Error(`README timetable: no condition in "${head}"`);
    const latched = !/not latched/.test(head);
    const rows: Row[] = [];
    for (const line of lines) {
      const cells = /^\| (\d+) \| (raise|clear|ack|tick) \| (.+) \|$/.exec(line.trim());
      if (cells) rows.push({ minute: Number(cells[1]), input: cells[2] as Row['input'], told: parseTold(cells[3]!.trim()) });
    }
    examples.push({ title: head.replace(/\*\*.*$/, '').replace(/\.$/, ''), condition, latched, rows });
  }
  return examples;
}

function toldBy(effects: AlarmEffect[]): Record<string, string[]> {
  const told: Record<string, string[]> = {};
  for (const e of effects) if (e.kind === 'notify') for (const c of e.contactIds) (told[c] ??= []).push(e.notice);
  for (const kinds of Object.values(told)) kinds.sort();
  return told;
}

const examples = readExamples();

describe('the README escalation timetable, row by row', () => {
  it('has the worked examples the rules promise: steps, repeats, acknowledgement, clear, return, downtime', () => {
    expect(examples.length).toBeGreaterThanOrEqual(5);
    // The policy the tables assume is the README's own example policy, the one the engine is given here.
    for (const line of ['- { after: 0m,  notify: [office] }', '- { after: 20m, notify: [oncall] }', 'repeat_every: 30m', 'max_repeats: 10']) {
      expect(README).toContain(line);
    }
    const inputs = new Set(examples.flatMap((e) => e.rows.map((r) => r.input)));
    expect([...inputs].sort()).toEqual(['ack', 'clear', 'raise', 'tick']);
    const kinds = new Set(examples.flatMap((e) => e.rows.flatMap((r) => Object.values(r.told).flat())));
    expect([...kinds].sort()).toEqual(['acknowledged', 'cleared', 'escalated', 'raised', 'repeat']);
  });

  for (const example of examples) {
    it(example.title, () => {
      const ctx = issueContext();
      let book: AlarmBook = initialAlarmBook([], 1, []);
      const raise: AlarmInput = { kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: example.condition, latched: example.latched, policy: 'default' };
      for (const row of example.rows) {
        const input: AlarmInput =
          row.input === 'raise' ? raise
          : row.input === 'clear' ? { kind: 'clear', source: 'well-pit', condition: example.condition }
          : row.input === 'ack' ? { kind: 'ack', alarmId: 1, actor: 'sam', note: 'on my way' }
          : { kind: 'tick' };
        const result = stepAlarms(book, input, T0 + row.minute * MIN, ctx);
        expect(result.error, `minute ${row.minute}`).toBeUndefined();
        book = result.book;
        const expected = Object.fromEntries(Object.entries(row.told).map(([c, k]) => [c, [...k].sort()]));
        expect({ minute: row.minute, told: toldBy(result.effects) }).toEqual({ minute: row.minute, told: expected });
      }
    });
  }
});
