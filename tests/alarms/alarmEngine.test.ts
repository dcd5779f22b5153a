import { describe, expect, it } from 'vitest';
import type { AlarmBook, AlarmInput } from '../../src/alarms/alarmEngine.js';
import { initialAlarmBook, nextWakeAt, openAlarms, stepAlarms } from '../../src/alarms/alarmEngine.js';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import { HOUR, MIN, T0, alarmRecord, alarmsIn, audits, issueContext, notices } from './alarmFixtures.js';

const ctx = issueContext();
const both = ['office', 'oncall'];

const tripped: AlarmInput = { kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: 'tripped', latched: true, policy: 'default' };
const cutCable: AlarmInput = { kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: 'open', latched: false, policy: 'default' };

/** Feeds inputs in order; returns the final book and every step's effects. */
function run(inputs: Array<[number, AlarmInput]>, book: AlarmBook = initialAlarmBook([], 1, [])) {
  const steps: Array<{ at: number; effects: AlarmEffect[]; error?: { code: string; message: string } }> = [];
  for (const [at, input] of inputs) {
    const result = stepAlarms(book, input, at, ctx);
    book = result.book;
    steps.push({ at, effects: result.effects, ...(result.error ? { error: result.error } : {}) });
  }
  return { book, steps, last: steps[steps.length - 1]! };
}

const tick: AlarmInput = { kind: 'tick' };

describe('escalation through the engine (issue 3 example, fake time)', () => {
  it('mails the office at once, the on-call phone at 20 min, both every 30 min, and stops on acknowledge', () => {
    const { steps, book } = run([
      [T0, tripped],
      [T0 + 20 * MIN, tick],
      [T0 + 30 * MIN, tick],
      [T0 + 40 * MIN, { kind: 'ack', alarmId: 1, actor: 'sam', note: 'heater reset' }],
      [T0 + 60 * MIN, tick],
    ]);
    expect(notices(steps[0]!.effects)).toEqual([['raised', ['office']]]);
    expect(notices(steps[1]!.effects)).toEqual([['escalated', ['oncall']]]);
    expect(notices(steps[2]!.effects)).toEqual([['repeat', both]]);
    const ack = steps[3]!.effects.find((e) => e.kind === 'notify');
    expect(ack).toEqual({ kind: 'notify', alarmId: 1, contactIds: both, notice: 'acknowledged', actor: 'sam', note: 'heater reset' });
    expect(steps[4]!.effects).toEqual([]);
    expect(nextWakeAt(book)).toBeNull();
    expect(openAlarms(book).map((a) => [a.id, a.state, a.ackedBy])).toEqual([[1, 'acknowledged', 'sam']]);
  });

  it('plans its wake-ups at the hand-computed times and honours max_repeats (10)', () => {
    let book = stepAlarms(initialAlarmBook([], 1, []), tripped, T0, ctx).book;
    const wakes: number[] = [];
    let repeats = 0;
    for (let wake = nextWakeAt(book); wake !== null; wake = nextWakeAt(book)) {
      wakes.push((wake - T0) / MIN);
      const result = stepAlarms(book, tick, wake, ctx);
      repeats += notices(result.effects).filter(([kind]) => kind === 'repeat').length;
      book = result.book;
      if (wakes.length > 40) break;
    }
    expect(wakes).toEqual([20, 30, 60, 90, 120, 150, 180, 210, 240, 270, 300]);
    expect(repeats).toBe(10);
    expect(stepAlarms(book, tick, T0 + 330 * MIN, ctx).effects).toEqual([]);
  });

  it('catches up after the daemon was down: each step once, one repeat for the missed slots', () => {
    const { steps, book } = run([
      [T0, tripped],
      [T0 + 125 * MIN, tick], // down through 20, 30, 60, 90 and 120 min
      [T0 + 150 * MIN, tick],
    ]);
    expect(notices(steps[1]!.effects)).toEqual([['escalated', ['oncall']], ['repeat', ['office']]]);
    expect(audits(steps[1]!.effects)).toEqual(['escalation-step', 'repeat']);
    expect(notices(steps[2]!.effects)).toEqual([['repeat', both]]);
    expect(nextWakeAt(book)).toBe(T0 + 180 * MIN);
  });

  it('resumes escalation from the store after a restart', () => {
    const stored = alarmRecord({ id: 4, latched: true, escalation: { stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * MIN, notified: ['office'] } });
    const book = initialAlarmBook([stored], 5, []);
    expect(nextWakeAt(book)).toBe(T0 + 20 * MIN);
    const afterDowntime = stepAlarms(book, tick, T0 + 3 * HOUR, ctx);
    expect(notices(afterDowntime.effects)).toEqual([['escalated', ['oncall']], ['repeat', ['office']]]);
    // Next slot after 3 h is 3 h 30 min.
    expect(nextWakeAt(afterDowntime.book)).toBe(T0 + 210 * MIN);
    const fresh = stepAlarms(afterDowntime.book, cutCable, T0 + 3 * HOUR, ctx);
    expect(alarmsIn(fresh.effects)[0]?.id).toBe(5);
  });

  it('notifies nobody when the raise names no policy, yet lists the alarm', () => {
    const result = stepAlarms(initialAlarmBook([], 1, []), { ...tripped, policy: null }, T0, ctx);
    expect(notices(result.effects)).toEqual([]);
    expect(openAlarms(result.book)).toHaveLength(1);
    expect(nextWakeAt(result.book)).toBeNull();
  });
});

describe('raise', () => {
  it('creates an alarm with the priority of its condition and emits the row before its audit', () => {
    const result = stepAlarms(initialAlarmBook([], 1, []), tripped, T0, ctx);
    expect(result.effects[0]).toMatchObject({ kind: 'alarm', alarm: { id: 1, priority: 'alarm', state: 'unacknowledged', active: true, raisedAt: T0 } });
    expect(audits(result.effects)).toEqual(['raise', 'escalation-step']);
    expect(result.effects.find((e) => e.kind === 'audit')).toMatchObject({ entry: { actor: 'system', at: T0, alarmId: 1, loopId: 'well-pit' } });
    // Issue 3: mail failing is system trouble, a cut cable is trouble.
    const mail = stepAlarms(result.book, { kind: 'raise', source: 'system', loopId: null, condition: 'mail-failing', latched: false, policy: 'default' }, T0, ctx);
    expect(alarmsIn(mail.effects)[0]).toMatchObject({ id: 2, priority: 'system' });
    const open = stepAlarms(mail.book, cutCable, T0, ctx);
    expect(alarmsIn(open.effects)[0]).toMatchObject({ id: 3, priority: 'trouble' });
    expect(openAlarms(open.book).map((a) => a.priority)).toEqual(['alarm', 'trouble', 'system']);
  });

  it('is idempotent: raising an active condition again does nothing', () => {
    const first = stepAlarms(initialAlarmBook([], 1, []), tripped, T0, ctx);
    const again = stepAlarms(first.book, tripped, T0 + MIN, ctx);
    expect(again.effects).toEqual([]);
    expect(again.error).toBeUndefined();
    expect(again.book.nextId).toBe(2);
    expect(openAlarms(again.book)).toHaveLength(1);
  });

  it('refuses a condition it does not know, naming it', () => {
    const bad = { ...tripped, condition: 'frozen' } as unknown as AlarmInput;
    const result = stepAlarms(initialAlarmBook([], 1, []), bad, T0, ctx);
    expect(result.error).toEqual({ code: 'PW_ALARM_BAD_ACTION', message: '"frozen" is not a condition the monitor knows' });
    expect(result.effects).toEqual([]);
  });
});

describe('latched and non-latched', () => {
  it('a latched alarm that clears unacknowledged stays, keeps escalating, and closes on acknowledge', () => {
    const { steps, book } = run([
      [T0, tripped],
      [T0 + 5 * MIN, { kind: 'clear', source: 'well-pit', condition: 'tripped' }],
      [T0 + 20 * MIN, tick],
      [T0 + 25 * MIN, { kind: 'ack', alarmId: 1, actor: 'sam', note: null }],
    ]);
    expect(alarmsIn(steps[1]!.effects)[0]).toMatchObject({ state: 'unacknowledged', active: false, clearedAt: T0 + 5 * MIN });
    expect(notices(steps[1]!.effects)).toEqual([['cleared', ['office']]]);
    expect(notices(steps[2]!.effects)).toEqual([['escalated', ['oncall']]]);
    expect(alarmsIn(steps[3]!.effects)[0]).toMatchObject({ state: 'normal', closedAt: T0 + 25 * MIN, ackedBy: 'sam' });
    expect(audits(steps[3]!.effects)).toEqual(['acknowledge', 'close']);
    expect(openAlarms(book)).toEqual([]);
  });

  it('a non-latched one returns unacknowledged, stops escalating, and comes back as the same alarm', () => {
    const { steps, book } = run([
      [T0, cutCable],
      [T0 + 5 * MIN, { kind: 'clear', source: 'well-pit', condition: 'open' }],
      [T0 + 20 * MIN, tick],
      [T0 + 25 * MIN, cutCable],
    ]);
    expect(alarmsIn(steps[1]!.effects)[0]).toMatchObject({ state: 'returned-unacknowledged', active: false });
    expect(notices(steps[1]!.effects)).toEqual([['cleared', ['office']]]);
    expect(steps[2]!.effects).toEqual([]);
    // Same id; the office hears it is back, and the 20-min step missed meanwhile fires now.
    expect(alarmsIn(steps[3]!.effects)[0]).toMatchObject({ id: 1, state: 'unacknowledged', active: true, clearedAt: null });
    expect(notices(steps[3]!.effects)).toEqual([['raised', ['office']], ['escalated', ['oncall']]]);
    expect(nextWakeAt(book)).toBe(T0 + 30 * MIN);
  });

  it('an acknowledged alarm closes when its condition clears, telling everyone notified', () => {
    const { last, book } = run([
      [T0, tripped],
      [T0 + 20 * MIN, tick],
      [T0 + 22 * MIN, { kind: 'ack', alarmId: 1, actor: 'sam', note: null }],
      [T0 + 50 * MIN, { kind: 'clear', source: 'well-pit', condition: 'tripped' }],
    ]);
    expect(notices(last.effects)).toEqual([['cleared', both]]);
    expect(audits(last.effects)).toEqual(['clear', 'close']);
    expect(openAlarms(book)).toEqual([]);
    // The next occurrence is a new alarm.
    expect(alarmsIn(stepAlarms(book, tripped, T0 + HOUR, ctx).effects)[0]?.id).toBe(2);
  });
});

describe('shelve', () => {
  const shelve = (durationMs: number, reason = 'heater being fitted'): AlarmInput => ({ kind: 'shelve', alarmId: 1, actor: 'sam', durationMs, reason });

  it('is capped by max_shelve (24 h) and needs a reason', () => {
    const { steps } = run([
      [T0, tripped],
      [T0 + MIN, shelve(24 * HOUR + 1)],
      [T0 + MIN, shelve(HOUR, '   ')],
      [T0 + MIN, shelve(0)],
    ]);
    expect(steps[1]).toMatchObject({ effects: [], error: { code: 'PW_ALARM_BAD_ACTION', message: 'an alarm may be shelved for at most 1440 minutes' } });
    expect(steps[2]).toMatchObject({ effects: [], error: { code: 'PW_ALARM_BAD_ACTION', message: 'shelving needs a reason' } });
    expect(steps[3]!.error?.code).toBe('PW_ALARM_BAD_ACTION');
    const exactlyMax = stepAlarms(run([[T0, tripped]]).book, shelve(24 * HOUR), T0, ctx);
    expect(exactlyMax.error).toBeUndefined();
  });

  it('hides escalation while shelved and returns by itself at expiry, catching up the missed step', () => {
    const { steps, book } = run([
      [T0, tripped],
      [T0 + 5 * MIN, shelve(HOUR)],
      [T0 + 20 * MIN, tick],
    ]);
    expect(notices(steps[1]!.effects)).toEqual([['shelved', ['office']]]);
    expect(steps[1]!.effects.find((e) => e.kind === 'notify')).toMatchObject({ actor: 'sam', note: 'heater being fitted' });
    expect(alarmsIn(steps[1]!.effects)[0]).toMatchObject({ state: 'shelved', shelvedUntil: T0 + 65 * MIN, shelveReason: 'heater being fitted' });
    expect(steps[2]!.effects).toEqual([]);
    expect(nextWakeAt(book)).toBe(T0 + 65 * MIN);

    const expired = stepAlarms(book, tick, T0 + 65 * MIN, ctx);
    expect(alarmsIn(expired.effects)[0]).toMatchObject({ state: 'unacknowledged', shelvedUntil: null });
    expect(audits(expired.effects)).toEqual(['shelve-expired', 'escalation-step']);
    expect(expired.effects.find((e) => e.kind === 'audit')).toMatchObject({ entry: { actor: 'system' } });
    // The office is told the alarm is back (in place of the 30- and 60-min repeats); oncall gets its step.
    expect(notices(expired.effects)).toEqual([['unshelved', ['office']], ['escalated', ['oncall']]]);
    expect(nextWakeAt(expired.book)).toBe(T0 + 90 * MIN);
  });

  it('a non-latched alarm that cleared while shelved comes back returned-unacknowledged', () => {
    const { last, book } = run([
      [T0, cutCable],
      [T0 + MIN, { kind: 'shelve', alarmId: 1, actor: 'sam', durationMs: 30 * MIN, reason: 'digging near the cable' }],
      [T0 + 2 * MIN, { kind: 'clear', source: 'well-pit', condition: 'open' }],
      [T0 + 31 * MIN, tick],
    ]);
    expect(alarmsIn(last.effects)[0]).toMatchObject({ state: 'returned-unacknowledged', active: false, clearedAt: T0 + 2 * MIN });
    expect(notices(last.effects)).toEqual([['unshelved', ['office']]]);
    expect(nextWakeAt(book)).toBeNull();
  });

  it('can be unshelved early by an operator, and refuses to unshelve what is not shelved', () => {
    const { steps } = run([
      [T0, tripped],
      [T0 + MIN, shelve(HOUR)],
      [T0 + 2 * MIN, { kind: 'unshelve', alarmId: 1, actor: 'kim' }],
      [T0 + 3 * MIN, { kind: 'unshelve', alarmId: 1, actor: 'kim' }],
    ]);
    expect(steps[2]!.effects.find((e) => e.kind === 'notify')).toMatchObject({ notice: 'unshelved', contactIds: ['office'], actor: 'kim' });
    expect(audits(steps[2]!.effects)).toEqual(['unshelve']);
    expect(steps[3]).toMatchObject({ effects: [], error: { code: 'PW_ALARM_BAD_ACTION', message: 'alarm 1 is not shelved' } });
  });
});

describe('out of service', () => {
  it('silences the loop, raises nothing new on it, and raises present conditions afresh on return', () => {
    const { steps, book } = run([
      [T0, tripped],
      [T0 + MIN, { kind: 'out-of-service', loopId: 'well-pit', actor: 'sam', note: 'replacing the node' }],
      [T0 + 2 * MIN, cutCable],
      [T0 + 3 * MIN, { kind: 'clear', source: 'well-pit', condition: 'tripped' }],
      [T0 + 20 * MIN, tick],
      [T0 + 40 * MIN, { kind: 'return-to-service', loopId: 'well-pit', actor: 'sam', note: 'new node fitted' }],
    ]);
    const [, out, newCondition, cleared, quietTick, back] = steps;
    expect(alarmsIn(out!.effects)).toMatchObject([{ id: 1, state: 'out-of-service' }]);
    expect(out!.effects[0]).toMatchObject({ kind: 'audit', entry: { action: 'out-of-service', alarmId: null, loopId: 'well-pit', actor: 'sam', note: 'replacing the node' } });
    expect(notices(out!.effects)).toEqual([]);
    expect(alarmsIn(newCondition!.effects)).toEqual([]);
    expect(audits(newCondition!.effects)).toEqual(['raise']);
    expect(notices(cleared!.effects)).toEqual([]);
    expect(quietTick!.effects).toEqual([]);

    // Back in service: the tripped alarm (cleared meanwhile) closes; the open circuit still present is a new alarm.
    expect(alarmsIn(back!.effects).map((a) => [a.id, a.condition, a.state, a.raisedAt])).toEqual([
      [1, 'tripped', 'normal', T0],
      [2, 'open', 'unacknowledged', T0 + 40 * MIN],
    ]);
    expect(notices(back!.effects)).toEqual([['raised', ['office']]]);
    expect(openAlarms(book).map((a) => a.id)).toEqual([2]);
    expect(nextWakeAt(book)).toBe(T0 + 60 * MIN);
  });

  it('refuses a missing reason, a second removal, and returning a loop that is in service', () => {
    const { steps } = run([
      [T0, { kind: 'out-of-service', loopId: 'well-pit', actor: 'sam', note: ' ' }],
      [T0, { kind: 'out-of-service', loopId: 'well-pit', actor: 'sam', note: 'pump work' }],
      [T0, { kind: 'out-of-service', loopId: 'well-pit', actor: 'sam', note: 'pump work' }],
      [T0, { kind: 'return-to-service', loopId: 'hay-loft', actor: 'sam', note: null }],
    ]);
    expect(steps[0]!.error).toEqual({ code: 'PW_ALARM_BAD_ACTION', message: 'taking a loop out of service needs a reason' });
    expect(steps[1]!.error).toBeUndefined();
    expect(steps[2]!.error).toEqual({ code: 'PW_ALARM_BAD_ACTION', message: 'loop well-pit is already out of service' });
    expect(steps[3]!.error).toEqual({ code: 'PW_ALARM_BAD_ACTION', message: 'loop hay-loft is not out of service' });
  });

  it('keeps loops out of service across a restart', () => {
    const book = initialAlarmBook([], 1, [{ loopId: 'well-pit', note: 'pump work' }]);
    const raised = stepAlarms(book, tripped, T0, ctx);
    expect(alarmsIn(raised.effects)).toEqual([]);
    const back = stepAlarms(raised.book, { kind: 'return-to-service', loopId: 'well-pit', actor: 'sam', note: null }, T0 + MIN, ctx);
    expect(alarmsIn(back.effects).map((a) => [a.id, a.condition, a.raisedAt])).toEqual([[1, 'tripped', T0 + MIN]]);
  });
});

describe('refused actions', () => {
  it('returns an error and no effects, leaving the book as it was', () => {
    const { book } = run([[T0, tripped], [T0 + MIN, { kind: 'ack', alarmId: 1, actor: 'sam', note: null }], [T0 + 2 * MIN, { kind: 'clear', source: 'well-pit', condition: 'tripped' }]]);
    const cases: Array<[AlarmInput, string, string]> = [
      [{ kind: 'ack', alarmId: 99, actor: 'sam', note: null }, 'PW_ALARM_NOT_FOUND', 'there is no alarm 99'],
      [{ kind: 'ack', alarmId: 1, actor: 'sam', note: null }, 'PW_ALARM_BAD_ACTION', 'alarm 1 is already closed'],
      [{ kind: 'shelve', alarmId: 1, actor: 'sam', durationMs: HOUR, reason: 'x' }, 'PW_ALARM_BAD_ACTION', 'alarm 1 is already closed'],
      [{ kind: 'unshelve', alarmId: 0, actor: 'sam' }, 'PW_ALARM_NOT_FOUND', 'there is no alarm 0'],
    ];
    for (const [input, code, message] of cases) {
      const result = stepAlarms(book, input, T0 + 3 * MIN, ctx);
      expect(result).toEqual({ book, effects: [], error: { code, message } });
    }
  });

  it('refuses a second acknowledgement, naming who made the first', () => {
    const { last } = run([[T0, tripped], [T0 + MIN, { kind: 'ack', alarmId: 1, actor: 'sam', note: null }], [T0 + 2 * MIN, { kind: 'ack', alarmId: 1, actor: 'kim', note: null }]]);
    expect(last.error).toEqual({ code: 'PW_ALARM_BAD_ACTION', message: 'alarm 1 was already acknowledged by sam' });
    expect(last.effects).toEqual([]);
  });
});
