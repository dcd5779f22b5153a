import { describe, expect, it } from 'vitest';
import { initialAlarmBook, stepAlarms, type AlarmBook } from '../../src/alarms/alarmEngine.js';
import type { AlarmInput } from '../../src/alarms/alarmInput.js';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import { MIN, T0, issueContext } from './alarmFixtures.js';

/**
 * README: every action — raise, clear, acknowledge, shelve, each escalation step — is a row in the audit
 * trail with who, when and a note. The notes are what someone reads afterwards, so they must say the
 * facts: which step of how many and to whom, which repeat slot (worked out by hand from the README
 * timetable: at minute 125 the slots at 30, 60, 90 and 120 have passed), who acknowledged and why, and
 * why an action was refused.
 */
const ctx = issueContext();
const tripped: AlarmInput = { kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: 'tripped', latched: true, policy: 'default' };

function runAll(inputs: Array<[number, AlarmInput]>) {
  let book: AlarmBook = initialAlarmBook([], 1, []);
  return inputs.map(([minute, input]) => {
    const result = stepAlarms(book, input, T0 + minute * MIN, ctx);
    book = result.book;
    return { minute, error: result.error ?? null, audit: auditOf(result.effects) };
  });
}
const auditOf = (effects: AlarmEffect[]) =>
  effects.flatMap((e) => (e.kind === 'audit' ? [{ actor: e.entry.actor, action: e.entry.action, alarmId: e.entry.alarmId, at: e.entry.at, note: e.entry.note }] : []));

describe('the audit trail says who, when and what', () => {
  it('a latched alarm: raise, step, clear, catch-up after downtime, acknowledge, close', () => {
    const [raise, clear, catchUp, ack] = runAll([
      [0, tripped],
      [10, { kind: 'clear', source: 'well-pit', condition: 'tripped' }],
      [125, { kind: 'tick' }],
      [130, { kind: 'ack', alarmId: 1, actor: 'sam', note: 'pipes fine' }],
    ]);
    expect(raise!.audit).toEqual([
      { actor: 'system', action: 'raise', alarmId: 1, at: T0, note: 'alarm: tripped on well-pit' },
      { actor: 'system', action: 'escalation-step', alarmId: 1, at: T0, note: 'step 1 of 2: office' },
    ]);
    expect(clear!.audit).toEqual([{ actor: 'system', action: 'clear', alarmId: 1, at: T0 + 10 * MIN, note: expect.stringMatching(/^condition cleared; latched/) }]);
    expect(catchUp!.audit.map((a) => [a.action, a.note])).toEqual([
      ['escalation-step', 'step 2 of 2: oncall'],
      ['repeat', 'repeat 4 of 10: office (one notice for 4 repeats that fell due while nothing ran)'],
    ]);
    expect(ack!.audit).toEqual([
      { actor: 'sam', action: 'acknowledge', alarmId: 1, at: T0 + 130 * MIN, note: 'pipes fine' },
      { actor: 'system', action: 'close', alarmId: 1, at: T0 + 130 * MIN, note: expect.stringMatching(/^closed: acknowledged, condition no longer present/) },
    ]);
  });

  it('a repeat in time is one slot, said without a catch-up remark', () => {
    const [, , repeat] = runAll([[0, tripped], [20, { kind: 'tick' }], [30, { kind: 'tick' }]]);
    expect(repeat!.audit.map((a) => [a.action, a.note])).toEqual([['repeat', 'repeat 1 of 10: office, oncall']]);
  });

  it('trouble with an unknown policy says which policy was used instead; shelving records its reason and end', () => {
    const results = runAll([
      [0, { kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: 'open', latched: false, policy: 'nosuch' }],
      [1, { kind: 'shelve', alarmId: 1, actor: 'sam', reason: 'digger on site', durationMs: 60 * MIN }],
      [2, { kind: 'clear', source: 'well-pit', condition: 'open' }],
      [61, { kind: 'tick' }],
    ]);
    expect(results[0]!.audit[0]).toMatchObject({ action: 'raise', note: 'trouble: open on well-pit; escalation policy "nosuch" is not configured; used "default"' });
    expect(results[1]!.audit).toEqual([{ actor: 'sam', action: 'shelve', alarmId: 1, at: T0 + MIN, note: `digger on site (until ${new Date(T0 + 61 * MIN).toISOString()})` }]);
    expect(results[2]!.audit[0]).toMatchObject({ action: 'clear', note: 'condition cleared while shelved' });
    expect(results[3]!.audit[0]).toMatchObject({ actor: 'system', action: 'shelve-expired', at: T0 + 61 * MIN, note: 'shelve time ended' });
  });

  it('refusals name the alarm and the reason, and write nothing', () => {
    const results = runAll([
      [0, tripped],
      [1, { kind: 'ack', alarmId: 1, actor: '', note: null }],
      [2, { kind: 'ack', alarmId: 9, actor: 'sam', note: null }],
      [3, { kind: 'ack', alarmId: 1, actor: 'sam', note: null }],
      [4, { kind: 'ack', alarmId: 1, actor: 'ann', note: null }],
      [5, { kind: 'shelve', alarmId: 1, actor: 'sam', reason: '', durationMs: MIN }],
      [6, { kind: 'shelve', alarmId: 1, actor: 'sam', reason: 'x', durationMs: 0 }],
      [7, { kind: 'shelve', alarmId: 1, actor: 'sam', reason: 'x', durationMs: 25 * 60 * MIN }],
    ]);
    expect(results.slice(1).map((r) => [r.error?.code ?? null, r.error?.message ?? null, r.audit.length])).toEqual([
      ['PW_ALARM_BAD_ACTION', 'an acknowledgement must name who makes it', 0],
      ['PW_ALARM_NOT_FOUND', 'there is no alarm 9', 0],
      [null, null, 1],
      ['PW_ALARM_BAD_ACTION', 'alarm 1 was already acknowledged by sam', 0],
      ['PW_ALARM_BAD_ACTION', 'shelving needs a reason', 0],
      ['PW_ALARM_BAD_ACTION', 'the shelve time must be a positive duration', 0],
      ['PW_ALARM_BAD_ACTION', 'an alarm may be shelved for at most 1440 minutes', 0],
    ]);
  });
});
