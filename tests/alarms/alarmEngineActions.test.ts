import { describe, expect, it } from 'vitest';
import type { AlarmBook, AlarmInput } from '../../src/alarms/alarmEngine.js';
import { initialAlarmBook, nextWakeAt, stepAlarms } from '../../src/alarms/alarmEngine.js';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import { HOUR, MIN, T0, alarmRecord, alarmsIn, issueContext, notices } from './alarmFixtures.js';

// People acting on alarms through the engine (what the phone page and the API send), fake time.
// Names and notes arrive as typed on a phone, so surrounding spaces are common practice to strip.

const ctx = issueContext();
const tripped: AlarmInput = { kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: 'tripped', latched: true, policy: 'default' };

function raisedBook(): AlarmBook {
  return stepAlarms(initialAlarmBook([], 1, []), tripped, T0, ctx).book;
}

const auditEntries = (effects: AlarmEffect[]) => effects.flatMap((e) => (e.kind === 'audit' ? [e.entry] : []));
const refusal = (message: string) => ({ code: 'PW_ALARM_BAD_ACTION', message });

describe('who acts, and their note, as the audit trail and the notices carry them', () => {
  it('an acknowledgement is recorded under the name without surrounding spaces, with the note trimmed', () => {
    const result = stepAlarms(raisedBook(), { kind: 'ack', alarmId: 1, actor: '  sam ', note: '  heater reset  ' }, T0 + 5 * MIN, ctx);
    expect(alarmsIn(result.effects)[0]).toMatchObject({ ackedBy: 'sam', note: 'heater reset' });
    expect(auditEntries(result.effects)[0]).toMatchObject({ actor: 'sam', action: 'acknowledge', note: 'heater reset' });
    expect(result.effects.find((e) => e.kind === 'notify')).toMatchObject({ notice: 'acknowledged', actor: 'sam', note: 'heater reset' });
  });

  it('a note of only spaces counts as no note', () => {
    const result = stepAlarms(raisedBook(), { kind: 'ack', alarmId: 1, actor: 'sam', note: '   ' }, T0 + 5 * MIN, ctx);
    expect(alarmsIn(result.effects)[0]?.note).toBeNull();
  });

  it('shelving and unshelving are recorded under the trimmed name', () => {
    const shelved = stepAlarms(raisedBook(), { kind: 'shelve', alarmId: 1, actor: ' kim ', durationMs: HOUR, reason: ' node swap ' }, T0 + 5 * MIN, ctx);
    expect(auditEntries(shelved.effects)[0]).toMatchObject({ actor: 'kim', action: 'shelve', note: 'node swap (until 2026-12-01T21:05:00.000Z)' });
    expect(alarmsIn(shelved.effects)[0]).toMatchObject({ state: 'shelved', shelveReason: 'node swap', shelvedUntil: T0 + 65 * MIN });
    const back = stepAlarms(shelved.book, { kind: 'unshelve', alarmId: 1, actor: '\tkim ' }, T0 + 10 * MIN, ctx);
    expect(auditEntries(back.effects)[0]).toMatchObject({ actor: 'kim', action: 'unshelve', note: null });
  });

  it('refuses, writing nothing, any action that does not say who does it', () => {
    const book = raisedBook();
    const blanks: Array<[AlarmInput, string]> = [
      [{ kind: 'ack', alarmId: 1, actor: '  ', note: null }, 'an acknowledgement must name who makes it'],
      [{ kind: 'shelve', alarmId: 1, actor: ' ', durationMs: HOUR, reason: 'node swap' }, 'shelving must name who does it'],
      [{ kind: 'out-of-service', loopId: 'well-pit', actor: ' ', note: 'rewiring' }, 'taking a loop out of service must name who does it'],
    ];
    for (const [input, message] of blanks) {
      expect(stepAlarms(book, input, T0 + MIN, ctx)).toEqual({ book, effects: [], error: refusal(message) });
    }
    const shelved = stepAlarms(book, { kind: 'shelve', alarmId: 1, actor: 'kim', durationMs: HOUR, reason: 'node swap' }, T0 + MIN, ctx).book;
    expect(stepAlarms(shelved, { kind: 'unshelve', alarmId: 1, actor: '' }, T0 + 2 * MIN, ctx)).toEqual({
      book: shelved, effects: [], error: refusal('unshelving must name who does it'),
    });
    const out = stepAlarms(book, { kind: 'out-of-service', loopId: 'well-pit', actor: 'kim', note: 'rewiring' }, T0 + MIN, ctx).book;
    expect(stepAlarms(out, { kind: 'return-to-service', loopId: 'well-pit', actor: '   ', note: null }, T0 + 2 * MIN, ctx)).toEqual({
      book: out, effects: [], error: refusal('returning a loop to service must name who does it'),
    });
  });

  it('refuses an input it does not know, naming it, instead of guessing', () => {
    const book = raisedBook();
    const odd = { kind: 'silence' } as unknown as AlarmInput;
    expect(stepAlarms(book, odd, T0 + MIN, ctx)).toEqual({ book, effects: [], error: refusal('unknown alarm input "silence"') });
  });

  it('an id that has not been handed out yet is "not found", not "already closed"', () => {
    const book = raisedBook(); // next id is 2
    expect(stepAlarms(book, { kind: 'ack', alarmId: 2, actor: 'sam', note: null }, T0 + MIN, ctx).error).toEqual({
      code: 'PW_ALARM_NOT_FOUND', message: 'there is no alarm 2',
    });
  });
});

describe('time passing', () => {
  it('a tick before anything is due writes nothing', () => {
    const book = raisedBook(); // on-call step due at 20 min
    expect(stepAlarms(book, { kind: 'tick' }, T0 + 19 * MIN, ctx)).toEqual({ book: expect.anything(), effects: [] });
  });

  it('a tick before the shelf ends leaves the shelved alarm alone', () => {
    const shelved = stepAlarms(raisedBook(), { kind: 'shelve', alarmId: 1, actor: 'kim', durationMs: HOUR, reason: 'node swap' }, T0 + MIN, ctx).book;
    expect(stepAlarms(shelved, { kind: 'tick' }, T0 + 30 * MIN, ctx).effects).toEqual([]);
    expect(stepAlarms(shelved, { kind: 'tick' }, T0 + 61 * MIN, ctx).effects.length).toBeGreaterThan(0);
  });

  it('an alarm someone acknowledged is never escalated by a tick, even from a row that still carries a due time', () => {
    const row = alarmRecord({ state: 'acknowledged', ackedAt: T0 + MIN, ackedBy: 'sam', escalation: { stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * MIN, notified: ['office'] } });
    const book = initialAlarmBook([row], 2, []);
    expect(stepAlarms(book, { kind: 'tick' }, T0 + 30 * MIN, ctx).effects).toEqual([]);
  });

  it('a shelf end left on an unacknowledged row does not stop its escalation', () => {
    const row = alarmRecord({ shelvedUntil: T0 + 5 * MIN, escalation: { stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * MIN, notified: ['office'] } });
    const result = stepAlarms(initialAlarmBook([row], 2, []), { kind: 'tick' }, T0 + 20 * MIN, ctx);
    expect(notices(result.effects)).toEqual([['escalated', ['oncall']]]);
  });

  it('when several alarms fall due together, the oldest alarm is dealt with first, and the book stays in id order', () => {
    const due = { stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * MIN, notified: ['office'] };
    // A book handed over out of order (its contract says ascending; the engine does not rely on it).
    const book: AlarmBook = {
      alarms: [alarmRecord({ id: 3, source: 'hay-loft', loopId: 'hay-loft', escalation: due }), alarmRecord({ id: 1, escalation: due }), alarmRecord({ id: 2, source: 'barn', loopId: 'barn', escalation: due })],
      nextId: 4,
      outOfService: [],
      suppressed: [],
    };
    const result = stepAlarms(book, { kind: 'tick' }, T0 + 20 * MIN, ctx);
    expect(result.effects.flatMap((e) => (e.kind === 'notify' ? [e.alarmId] : []))).toEqual([1, 2, 3]);
    expect(result.book.alarms.map((a) => a.id)).toEqual([1, 2, 3]);
  });

  it('after a reload that leaves no policy at all, a waiting alarm stops asking to be woken (no busy loop)', () => {
    const book = raisedBook();
    expect(nextWakeAt(book)).toBe(T0 + 20 * MIN);
    const bare = { policies: {}, maxShelveMs: ctx.maxShelveMs };
    const result = stepAlarms(book, { kind: 'tick' }, T0 + 20 * MIN, bare);
    expect(notices(result.effects)).toEqual([]);
    expect(nextWakeAt(result.book)).toBeNull();
  });
});
