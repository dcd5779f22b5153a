import { describe, expect, it } from 'vitest';
import type { AlarmBook, AlarmInput } from '../../src/alarms/alarmEngine.js';
import { initialAlarmBook, stepAlarms } from '../../src/alarms/alarmEngine.js';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import type { AlarmContext } from '../../src/alarms/alarmInput.js';
import { HOUR, MIN, T0, alarmRecord, alarmsIn, issueContext, notices } from './alarmFixtures.js';

// One condition on several loops at once: each loop's condition is its own alarm (README "Alarms,
// trouble and mail": one alarm per loop and condition), and each loop taken out of service keeps its
// own conditions to raise on return (README: "take a loop out of service for maintenance"; ANSI/ISA-18.2
// "out of service", cited from memory). The demo loops are from the test fixtures (invented).

const ctx = issueContext();
const raise = (loopId: string, condition: 'tripped' | 'open' | 'shorted'): AlarmInput => ({ kind: 'raise', source: loopId, loopId, condition, latched: false, policy: 'default' });
const clear = (loopId: string, condition: 'tripped' | 'open' | 'shorted'): AlarmInput => ({ kind: 'clear', source: loopId, condition });
const out = (loopId: string): AlarmInput => ({ kind: 'out-of-service', loopId, actor: 'sam', note: 'rewiring' });
const back = (loopId: string): AlarmInput => ({ kind: 'return-to-service', loopId, actor: 'sam', note: null });

function run(inputs: Array<[number, AlarmInput]>, context: AlarmContext = ctx, book: AlarmBook = initialAlarmBook([], 1, [])) {
  const steps: Array<{ effects: AlarmEffect[]; book: AlarmBook }> = [];
  for (const [at, input] of inputs) {
    const result = stepAlarms(book, input, at, context);
    if (result.error) throw new Error(`refused: ${result.error.message}`);
    book = result.book;
    steps.push({ effects: result.effects, book });
  }
  return { book, steps };
}

const auditNotes = (effects: AlarmEffect[]) => effects.flatMap((e) => (e.kind === 'audit' ? [`${e.entry.action} ${e.entry.loopId}: ${e.entry.note}`] : []));

describe('one condition on two loops', () => {
  it('is two alarms, and each clears on its own', () => {
    const { steps, book } = run([
      [T0, raise('well-pit', 'tripped')],
      [T0 + MIN, raise('hay-loft', 'tripped')],
      [T0 + 2 * MIN, clear('well-pit', 'tripped')],
    ]);
    expect(alarmsIn(steps[1]!.effects).map((a) => [a.id, a.source, a.condition, a.raisedAt])).toEqual([[2, 'hay-loft', 'tripped', T0 + MIN]]);
    // The hay loft's trip is raised and mailed like the first: the well pit's alarm does not swallow it.
    expect(notices(steps[1]!.effects)).toEqual([['raised', ['office']]]);
    expect(alarmsIn(steps[2]!.effects).map((a) => [a.id, a.source, a.active])).toEqual([[1, 'well-pit', false]]);
    expect(book.alarms.map((a) => [a.id, a.source, a.active])).toEqual([[1, 'well-pit', false], [2, 'hay-loft', true]]);
  });

  it('kept for two loops out of service, each loop gets its own back on return', () => {
    const { steps, book } = run([
      [T0, out('well-pit')],
      [T0, out('hay-loft')],
      [T0 + MIN, raise('hay-loft', 'open')],
      [T0 + 2 * MIN, raise('well-pit', 'open')],
      [T0 + 3 * MIN, back('well-pit')],
    ]);
    // The second loop's report is kept too, and said so in the audit trail.
    expect(auditNotes(steps[3]!.effects)).toEqual(['raise well-pit: open on well-pit while the loop is out of service: not raised']);
    expect(alarmsIn(steps[4]!.effects).map((a) => [a.source, a.condition, a.raisedAt])).toEqual([['well-pit', 'open', T0 + 3 * MIN]]);
    expect(book.suppressed.map((s) => [s.loopId, s.condition, s.since])).toEqual([['hay-loft', 'open', T0 + MIN]]);
  });

  it('a clear on one loop out of service forgets only that loop\'s kept condition', () => {
    const { steps, book } = run([
      [T0, out('well-pit')],
      [T0, out('hay-loft')],
      [T0 + MIN, raise('hay-loft', 'open')],
      [T0 + 2 * MIN, raise('well-pit', 'open')],
      [T0 + 3 * MIN, clear('well-pit', 'open')],
      [T0 + 4 * MIN, back('hay-loft')],
    ]);
    expect(auditNotes(steps[4]!.effects)).toEqual(['clear well-pit: open on well-pit cleared while the loop is out of service']);
    expect(steps[4]!.book.suppressed.map((s) => [s.loopId, s.condition])).toEqual([['hay-loft', 'open']]);
    // The hay loft's open circuit never cleared, so returning that loop raises it.
    expect(alarmsIn(steps[5]!.effects).map((a) => [a.source, a.condition, a.state])).toEqual([['hay-loft', 'open', 'unacknowledged']]);
    expect(book.suppressed).toEqual([]);
  });

  it('the first condition kept on a loop out of service is forgotten when it clears', () => {
    const { steps, book } = run([
      [T0, out('well-pit')],
      [T0 + MIN, raise('well-pit', 'open')],
      [T0 + 2 * MIN, clear('well-pit', 'open')],
      [T0 + 3 * MIN, back('well-pit')],
    ]);
    expect(auditNotes(steps[2]!.effects)).toEqual(['clear well-pit: open on well-pit cleared while the loop is out of service']);
    // Gone before the return: nothing is raised for it.
    expect(alarmsIn(steps[3]!.effects)).toEqual([]);
    expect(book.suppressed).toEqual([]);
  });
});

describe('an escalation step that tells two contacts', () => {
  it('names both in its audit row and tells both', () => {
    const both: AlarmContext = {
      ...ctx,
      policies: { default: { name: 'default', steps: [{ afterMs: 0, contactIds: ['office', 'oncall'] }], repeatEveryMs: null, maxRepeats: 0 } },
    };
    const { steps } = run([[T0, raise('well-pit', 'tripped')], [T0 + HOUR, { kind: 'tick' }]], both);
    const raised = steps[0]!.effects;
    expect(auditNotes(raised)).toContain('escalation-step well-pit: step 1 of 1: office, oncall');
    expect(notices(raised)).toEqual([['raised', ['office', 'oncall']]]);
    // No repeats configured: an hour later nobody is told again.
    expect(notices(steps[1]!.effects)).toEqual([]);
  });
});

describe('a loop with several alarms taken out of service and back', () => {
  it('deals with its alarms oldest first, even from a book handed over out of order', () => {
    // Its contract says ascending ids; like the tick, out of service does not rely on it.
    const book: AlarmBook = {
      alarms: [
        alarmRecord({ id: 3, condition: 'shorted', priority: 'trouble' }),
        alarmRecord({ id: 1 }),
        alarmRecord({ id: 2, condition: 'open', priority: 'trouble' }),
      ],
      nextId: 4,
      outOfService: [],
      suppressed: [],
    };
    const taken = stepAlarms(book, out('well-pit'), T0 + MIN, ctx);
    expect(alarmsIn(taken.effects).map((a) => [a.id, a.state])).toEqual([[1, 'out-of-service'], [2, 'out-of-service'], [3, 'out-of-service']]);
    const returned = stepAlarms(taken.book, back('well-pit'), T0 + 2 * MIN, ctx);
    // Closed oldest first, then each still-present condition raised afresh in the same order.
    expect(alarmsIn(returned.effects).map((a) => [a.id, a.condition, a.state])).toEqual([
      [1, 'tripped', 'normal'],
      [2, 'open', 'normal'],
      [3, 'shorted', 'normal'],
      [4, 'tripped', 'unacknowledged'],
      [5, 'open', 'unacknowledged'],
      [6, 'shorted', 'unacknowledged'],
    ]);
  });
});
