import { describe, expect, it } from 'vitest';
import type { AlarmBook, AlarmInput } from '../../src/alarms/alarmEngine.js';
import { initialAlarmBook, stepAlarms } from '../../src/alarms/alarmEngine.js';
import type { AlarmContext } from '../../src/alarms/alarmInput.js';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import { HOUR, MIN, T0, alarmRecord, alarmsIn, issueContext, notices } from './alarmFixtures.js';

// What the audit trail says about each transition (README "Audit trail": every row says in plain words
// what happened and why), and what an action does to the escalation that was pending. Fake time.

const ctx = issueContext();
const tripped = (latched: boolean, policy: string | null = 'default'): AlarmInput => ({ kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: 'tripped', latched, policy });
const clearTripped: AlarmInput = { kind: 'clear', source: 'well-pit', condition: 'tripped' };
const ack: AlarmInput = { kind: 'ack', alarmId: 1, actor: 'sam', note: null };
const shelve: AlarmInput = { kind: 'shelve', alarmId: 1, actor: 'sam', durationMs: HOUR, reason: 'node swap' };

function run(inputs: Array<[number, AlarmInput]>, context: AlarmContext = ctx, book: AlarmBook = initialAlarmBook([], 1, [])) {
  const steps: AlarmEffect[][] = [];
  for (const [at, input] of inputs) {
    const result = stepAlarms(book, input, at, context);
    if (result.error) throw new Error(`refused: ${result.error.message}`);
    book = result.book;
    steps.push(result.effects);
  }
  return { book, steps, last: steps[steps.length - 1]! };
}

const notes = (effects: AlarmEffect[]) => effects.flatMap((e) => (e.kind === 'audit' ? [`${e.entry.actor} ${e.entry.action}: ${e.entry.note}`] : []));

describe('audit wording for conditions', () => {
  it('says why nobody is told when the raise names no policy, or one that does not exist with no default to fall back on', () => {
    expect(notes(run([[T0, tripped(true, null)]]).last)).toEqual(['system raise: alarm: tripped on well-pit; no escalation policy: nobody is notified']);
    const noDefault: AlarmContext = { policies: {}, maxShelveMs: ctx.maxShelveMs };
    const { last, book } = run([[T0, tripped(true, 'night')]], noDefault);
    expect(notes(last)).toEqual(['system raise: alarm: tripped on well-pit; escalation policy "night" is not configured: nobody is notified']);
    expect(notices(last)).toEqual([]);
    expect(book.alarms[0]?.escalation.nextAt).toBeNull();
  });

  it('numbers escalation steps against the policy (issue 3 example: two steps)', () => {
    const { steps } = run([[T0, tripped(true)], [T0 + 20 * MIN, { kind: 'tick' }]]);
    expect(notes(steps[0]!)).toContain('system escalation-step: step 1 of 2: office');
    expect(notes(steps[1]!)).toEqual(['system escalation-step: step 2 of 2: oncall']);
  });

  it('says what a clear means for each kind of alarm', () => {
    expect(notes(run([[T0, tripped(true)], [T0 + MIN, clearTripped]]).last)).toEqual(['system clear: condition cleared; latched, so it stays until acknowledged']);
    expect(notes(run([[T0, tripped(false)], [T0 + MIN, clearTripped]]).last)).toEqual(['system clear: condition cleared before anyone acknowledged']);
    expect(notes(run([[T0, tripped(false)], [T0 + MIN, ack], [T0 + 2 * MIN, clearTripped]]).last)).toEqual([
      'system clear: condition cleared',
      'system close: closed: condition cleared after acknowledgement',
    ]);
    expect(notes(run([[T0, tripped(false)], [T0 + MIN, shelve], [T0 + 2 * MIN, clearTripped]]).last)).toEqual(['system clear: condition cleared while shelved']);
  });

  it('a clear for a condition already gone writes nothing', () => {
    const { last } = run([[T0, tripped(true)], [T0 + MIN, clearTripped], [T0 + 2 * MIN, clearTripped]]);
    expect(last).toEqual([]);
  });

  it('says when a condition comes back, and that a hidden alarm is not announced', () => {
    expect(notes(run([[T0, tripped(false)], [T0 + MIN, clearTripped], [T0 + 2 * MIN, tripped(false)]]).last)[0]).toBe('system raise: condition present again');
    expect(notes(run([[T0, tripped(false)], [T0 + MIN, shelve], [T0 + 2 * MIN, clearTripped], [T0 + 3 * MIN, tripped(false)]]).last)).toEqual([
      'system raise: condition present again (alarm is shelved: not announced)',
    ]);
    const oos: AlarmInput = { kind: 'out-of-service', loopId: 'well-pit', actor: 'sam', note: 'rewiring' };
    const { last } = run([[T0, tripped(false)], [T0 + MIN, oos], [T0 + 2 * MIN, clearTripped], [T0 + 3 * MIN, tripped(false)]]);
    expect(notes(last)).toEqual(['system raise: condition present again (alarm is out-of-service: not announced)']);
    expect(notices(last)).toEqual([]);
  });
});

describe('closing', () => {
  it('says why an alarm closed', () => {
    expect(notes(run([[T0, tripped(false)], [T0 + MIN, clearTripped], [T0 + 2 * MIN, ack]]).last)).toEqual([
      'sam acknowledge: null',
      'system close: closed: acknowledged, condition no longer present',
    ]);
    const shelvedAfterAck: Array<[number, AlarmInput]> = [[T0, tripped(false)], [T0 + MIN, ack], [T0 + 2 * MIN, shelve], [T0 + 3 * MIN, clearTripped]];
    expect(notes(run([...shelvedAfterAck, [T0 + 4 * MIN, { kind: 'unshelve', alarmId: 1, actor: 'kim' }]]).last)).toEqual([
      'kim unshelve: null',
      'system close: closed: acknowledged before shelving and cleared while shelved',
    ]);
    expect(notes(run([...shelvedAfterAck, [T0 + 2 * MIN + HOUR, { kind: 'tick' }]]).last)).toEqual([
      'system shelve-expired: shelve time ended',
      'system close: closed: acknowledged before shelving and cleared while shelved',
    ]);
  });
});

describe('what an action does to the pending escalation', () => {
  it('a reminder is never planned after acknowledgement', () => {
    const { last, book } = run([[T0, tripped(true)], [T0 + 5 * MIN, ack]]);
    expect(alarmsIn(last)[0]?.escalation.nextAt).toBeNull();
    expect(book.alarms[0]?.escalation.nextAt).toBeNull();
    expect(stepAlarms(book, { kind: 'tick' }, T0 + 20 * MIN, ctx).effects).toEqual([]);
  });

  it('a clear does not itself escalate: step 2 is told at the tick, not with the clear notice', () => {
    // Latched alarm clears at 25 min, after the 20-min step fell due but before the tick for it ran.
    const { last } = run([[T0, tripped(true)], [T0 + 25 * MIN, clearTripped]]);
    expect(notices(last)).toEqual([['cleared', ['office']]]);
  });
});

describe('finding the alarm a condition report belongs to', () => {
  it('a report for one loop never touches another loop\'s alarm', () => {
    const hayLoft: AlarmInput = { kind: 'raise', source: 'hay-loft', loopId: 'hay-loft', condition: 'tripped', latched: true, policy: 'default' };
    const { last } = run([[T0, tripped(true)], [T0, hayLoft], [T0 + MIN, tripped(true)]]);
    expect(last).toEqual([]);
  });

  it('if the store ever holds two open alarms for one condition, reports go to the newest', () => {
    const open = (id: number) => alarmRecord({ id, latched: true });
    const book: AlarmBook = { alarms: [open(2), open(5), open(3)], nextId: 6, outOfService: [], suppressed: [] };
    const { last } = run([[T0 + MIN, clearTripped]], ctx, book);
    expect(alarmsIn(last).map((a) => [a.id, a.active])).toEqual([[5, false]]);
  });
});
