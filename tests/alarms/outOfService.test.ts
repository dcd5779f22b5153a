import { describe, expect, it } from 'vitest';
import type { AlarmBook, AlarmInput } from '../../src/alarms/alarmEngine.js';
import { initialAlarmBook, stepAlarms } from '../../src/alarms/alarmEngine.js';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import { MIN, T0, alarmsIn, issueContext, notices } from './alarmFixtures.js';

// Loops out of service for maintenance (ANSI/ISA-18.2 "out of service", cited from memory): nothing on
// such a loop is announced, what comes up meanwhile is kept, and returning the loop raises what is still
// present as new alarms. Other loops are never affected. Fake time; demo loops from the test fixtures.

const ctx = issueContext();
const raise = (loopId: string, condition: 'tripped' | 'open' | 'shorted', latched = false): AlarmInput => ({ kind: 'raise', source: loopId, loopId, condition, latched, policy: 'default' });
const clear = (loopId: string, condition: 'tripped' | 'open' | 'shorted'): AlarmInput => ({ kind: 'clear', source: loopId, condition });
const out = (loopId: string, note = 'rewiring'): AlarmInput => ({ kind: 'out-of-service', loopId, actor: 'sam', note });
const back = (loopId: string, note: string | null = null): AlarmInput => ({ kind: 'return-to-service', loopId, actor: 'sam', note });

function run(inputs: Array<[number, AlarmInput]>, book: AlarmBook = initialAlarmBook([], 1, [])) {
  const steps: Array<{ effects: AlarmEffect[]; error?: unknown; book: AlarmBook }> = [];
  for (const [at, input] of inputs) {
    const result = stepAlarms(book, input, at, ctx);
    if (result.error) throw new Error(`refused: ${result.error.message}`);
    book = result.book;
    steps.push({ effects: result.effects, book });
  }
  return { book, steps };
}

const auditsOf = (effects: AlarmEffect[]) => effects.flatMap((e) => (e.kind === 'audit' ? [[e.entry.actor, e.entry.action, e.entry.alarmId, e.entry.note]] : []));

describe('taking a loop out of service', () => {
  it('moves only that loop\'s alarms out of service, each with an audit row naming who and why', () => {
    const { steps } = run([
      [T0, raise('well-pit', 'tripped')],
      [T0, raise('hay-loft', 'open')],
      [T0 + MIN, out('well-pit', 'replacing the node')],
    ]);
    const taken = steps[2]!.effects;
    expect(alarmsIn(taken).map((a) => [a.id, a.state])).toEqual([[1, 'out-of-service']]);
    expect(auditsOf(taken)).toEqual([
      ['sam', 'out-of-service', null, 'replacing the node'],
      ['sam', 'out-of-service', 1, 'replacing the node'],
    ]);
    expect(steps[2]!.book.alarms.map((a) => [a.id, a.state])).toEqual([[1, 'out-of-service'], [2, 'unacknowledged']]);
  });

  it('keeps each condition that comes up meanwhile once, saying it was not raised', () => {
    const { steps, book } = run([
      [T0, out('well-pit')],
      [T0 + MIN, raise('well-pit', 'open')],
      [T0 + 2 * MIN, raise('well-pit', 'open')],
      [T0 + 3 * MIN, raise('well-pit', 'shorted')],
    ]);
    expect(auditsOf(steps[1]!.effects)).toEqual([['system', 'raise', null, 'open on well-pit while the loop is out of service: not raised']]);
    expect(steps[2]!.effects).toEqual([]);
    expect(auditsOf(steps[3]!.effects)).toEqual([['system', 'raise', null, 'shorted on well-pit while the loop is out of service: not raised']]);
    expect(book.suppressed.map((s) => [s.loopId, s.condition, s.since])).toEqual([['well-pit', 'open', T0 + MIN], ['well-pit', 'shorted', T0 + 3 * MIN]]);
    expect(book.alarms).toEqual([]);
  });

  it('forgets a kept condition that clears before the loop returns, and says so', () => {
    const { steps, book } = run([
      [T0, out('well-pit')],
      [T0 + MIN, raise('well-pit', 'open')],
      [T0 + 2 * MIN, raise('well-pit', 'shorted')],
      [T0 + 3 * MIN, clear('well-pit', 'shorted')],
      [T0 + 4 * MIN, clear('well-pit', 'tripped')],
      [T0 + 5 * MIN, back('well-pit')],
    ]);
    expect(auditsOf(steps[3]!.effects)).toEqual([['system', 'clear', null, 'shorted on well-pit cleared while the loop is out of service']]);
    expect(steps[3]!.book.suppressed.map((s) => s.condition)).toEqual(['open']);
    // Nothing kept for tripped: clearing it writes nothing.
    expect(steps[4]!.effects).toEqual([]);
    // Only what is still present comes back as an alarm.
    expect(alarmsIn(steps[5]!.effects).map((a) => [a.id, a.condition, a.state])).toEqual([[1, 'open', 'unacknowledged']]);
    expect(book.suppressed).toEqual([]);
  });
});

describe('returning a loop to service', () => {
  it('closes its old alarms and raises what is still present as new alarms, each saying why', () => {
    const { steps, book } = run([
      [T0, raise('well-pit', 'tripped', true)],
      [T0, raise('well-pit', 'open')],
      [T0 + MIN, out('well-pit')],
      [T0 + 2 * MIN, clear('well-pit', 'open')],
      [T0 + 40 * MIN, back('well-pit', '  new node fitted ')],
    ]);
    const returned = steps[4]!.effects;
    expect(alarmsIn(returned).map((a) => [a.id, a.condition, a.state, a.raisedAt])).toEqual([
      [1, 'tripped', 'normal', T0],
      [2, 'open', 'normal', T0],
      [3, 'tripped', 'unacknowledged', T0 + 40 * MIN],
    ]);
    expect(auditsOf(returned)).toEqual([
      ['sam', 'return-to-service', null, 'new node fitted'],
      ['sam', 'return-to-service', 1, 'new node fitted'],
      ['system', 'close', 1, 'closed: loop returned to service (conditions still present are raised as new alarms)'],
      ['sam', 'return-to-service', 2, 'new node fitted'],
      ['system', 'close', 2, 'closed: loop returned to service (conditions still present are raised as new alarms)'],
      ['system', 'raise', 3, 'alarm: tripped on well-pit; present when the loop returned to service'],
      ['system', 'escalation-step', 3, 'step 1 of 2: office'],
    ]);
    expect(notices(returned)).toEqual([['raised', ['office']]]);
    expect(book.alarms.map((a) => [a.id, a.latched])).toEqual([[3, true]]);
    expect(book.outOfService).toEqual([]);
  });

  it('a return note of only spaces is no note', () => {
    const { steps } = run([[T0, out('well-pit')], [T0 + MIN, back('well-pit', '   ')]]);
    expect(auditsOf(steps[1]!.effects)).toEqual([['sam', 'return-to-service', null, null]]);
  });

  it('leaves other loops out of service, with what was kept for them', () => {
    const { steps } = run([
      [T0, out('well-pit')],
      [T0, out('hay-loft', 'roof repair')],
      [T0 + MIN, raise('well-pit', 'open')],
      [T0 + MIN, raise('hay-loft', 'shorted')],
      [T0 + 2 * MIN, back('well-pit')],
      [T0 + 3 * MIN, back('hay-loft')],
    ]);
    const first = steps[4]!;
    expect(alarmsIn(first.effects).map((a) => [a.source, a.condition])).toEqual([['well-pit', 'open']]);
    expect(first.book.outOfService).toEqual([{ loopId: 'hay-loft', note: 'roof repair' }]);
    expect(first.book.suppressed.map((s) => [s.loopId, s.condition])).toEqual([['hay-loft', 'shorted']]);
    const second = steps[5]!;
    expect(alarmsIn(second.effects).map((a) => [a.id, a.source, a.condition])).toEqual([[2, 'hay-loft', 'shorted']]);
    expect(second.book.suppressed).toEqual([]);
  });

  it('a condition on another loop is raised as usual while one loop is out', () => {
    const { steps } = run([[T0, out('well-pit')], [T0 + MIN, raise('hay-loft', 'open')]]);
    expect(alarmsIn(steps[1]!.effects).map((a) => [a.id, a.source, a.state])).toEqual([[1, 'hay-loft', 'unacknowledged']]);
  });

  it('decoder and system trouble (no loop) are raised whatever loops are out', () => {
    const { steps } = run([[T0, out('well-pit')], [T0 + MIN, { kind: 'raise', source: 'main', loopId: null, condition: 'offline', latched: false, policy: 'default' }]]);
    expect(alarmsIn(steps[1]!.effects).map((a) => [a.source, a.condition])).toEqual([['main', 'offline']]);
  });
});
