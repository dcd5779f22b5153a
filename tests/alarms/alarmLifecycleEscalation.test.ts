import { describe, expect, it } from 'vitest';
import type { EscalationDirective } from '../../src/alarms/alarmLifecycle.js';
import { applyAlarmEvent } from '../../src/alarms/alarmLifecycle.js';
import type { AlarmRecord, NoticeKind } from '../../src/alarms/alarmTypes.js';
import { MIN, T0, alarmRecord, lifecycleEvents, lifecycleStarts } from './alarmFixtures.js';

/*
 * What each transition means for the people on the escalation list (pairwatch's own rules, README
 * "Escalation"): escalation stops once someone has dealt with the alarm or it is hidden (acknowledged,
 * closed, shelved, out of service, returned before anyone acknowledged); it keeps going while a latched
 * alarm waits for acknowledgement; it resumes (catching up what is due) when the alarm is annunciated
 * again. The notice is what everyone told so far hears about the transition. Every start row below
 * has an escalation step pending at T0 + 20 min, so a stop must visibly cancel it.
 */

const now = T0 + 10 * MIN;
const pending = { stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * MIN, notified: ['office'] };
const row = (overrides: Partial<AlarmRecord>): AlarmRecord => alarmRecord({ escalation: pending, ...overrides });

const start = lifecycleStarts(now, row);
const ev = lifecycleEvents(now);

type Row = [from: keyof typeof start, event: keyof typeof ev, escalation: EscalationDirective, notice: NoticeKind | null];

const table: Row[] = [
  ['normal', 'active', 'resume', null], // a new occurrence: the first step tells people, not a notice
  ['unackActive', 'ack', 'stop', 'acknowledged'],
  ['unackActive', 'clear', 'stop', 'cleared'],
  ['acked', 'clear', 'stop', 'cleared'],
  ['returned', 'ack', 'stop', 'acknowledged'],
  ['returned', 'active', 'resume', 'raised'],
  ['unackLatched', 'clear', 'continue', 'cleared'], // latched: reminders go on until acknowledged
  ['latchedCleared', 'ack', 'stop', 'acknowledged'],
  ['latchedCleared', 'active', 'continue', 'raised'],
  ['unackActive', 'shelve', 'stop', 'shelved'],
  ['acked', 'shelve', 'stop', 'shelved'],
  ['returned', 'shelve', 'stop', 'shelved'],
  ['shelvedActive', 'unshelve', 'resume', 'unshelved'],
  ['shelvedActive', 'expiry', 'resume', 'unshelved'],
  ['shelvedAckedCleared', 'expiry', 'stop', 'cleared'],
  ['shelvedAckedCleared', 'unshelve', 'stop', 'cleared'],
  ['shelvedUnackedCleared', 'expiry', 'stop', 'unshelved'],
  ['shelvedLatchedCleared', 'expiry', 'resume', 'unshelved'],
  ['shelvedLatchedCleared', 'unshelve', 'resume', 'unshelved'],
  ['shelvedActive', 'clear', 'continue', null], // hidden: nobody hears of it yet
  ['shelvedUnackedCleared', 'active', 'continue', null],
  ['unackActive', 'remove', 'stop', null],
  ['acked', 'remove', 'stop', null],
  ['shelvedActive', 'remove', 'stop', null],
  ['outOfService', 'clear', 'continue', null],
  ['outOfServiceCleared', 'active', 'continue', null],
  ['outOfService', 'back', 'stop', null],
  ['outOfServiceCleared', 'back', 'stop', null],
];

describe('what each transition does to escalation and who hears of it', () => {
  it.each(table)('%s + %s: escalation %s, notice %s', (from, event, escalation, notice) => {
    const outcome = applyAlarmEvent(start[from], ev[event], now);
    expect(outcome).toMatchObject({ ok: true, changed: true, escalation, notice });
    if (!outcome.ok || !outcome.changed) return;
    // A stop cancels the step that was pending; otherwise the pending time stays for the planner.
    expect(outcome.alarm.escalation.nextAt).toBe(escalation === 'stop' ? null : T0 + 20 * MIN);
    expect(outcome.alarm.escalation.notified).toEqual(['office']);
  });

  it('a reminder is never planned after acknowledgement, in any state it is acknowledged from', () => {
    for (const from of ['unackActive', 'returned', 'latchedCleared'] as const) {
      const outcome = applyAlarmEvent(start[from], ev.ack, now);
      expect(outcome.ok && outcome.changed && outcome.alarm.escalation.nextAt).toBeNull();
    }
  });
});

describe('closed records and odd rows are left alone', () => {
  it('an alarm counts as closed by its state or by its close time, either one', () => {
    const normalNoTime = row({ state: 'normal', active: false, closedAt: null });
    const closedAcked = row({ state: 'acknowledged', ackedBy: 'sam', closedAt: T0 + MIN });
    for (const closed of [normalNoTime, closedAcked]) {
      expect(applyAlarmEvent(closed, ev.ack, now)).toEqual({ ok: false, code: 'PW_ALARM_BAD_ACTION', message: 'alarm 1 is already closed; there is nothing to acknowledge' });
      expect(applyAlarmEvent(closed, ev.shelve, now)).toEqual({ ok: false, code: 'PW_ALARM_BAD_ACTION', message: 'alarm 1 is already closed; there is nothing to shelve' });
      expect(applyAlarmEvent(closed, ev.clear, now)).toEqual({ ok: true, changed: false });
      expect(applyAlarmEvent(closed, ev.remove, now)).toEqual({ ok: true, changed: false });
    }
  });

  it('a shelved row that is already closed neither expires nor unshelves', () => {
    const closedShelf = row({ state: 'shelved', shelvedUntil: now - MIN, shelveReason: 'r', closedAt: T0 + MIN });
    expect(applyAlarmEvent(closedShelf, ev.expiry, now)).toEqual({ ok: true, changed: false });
    expect(applyAlarmEvent(closedShelf, ev.unshelve, now)).toMatchObject({ ok: false, message: 'alarm 1 is not shelved' });
  });

  it('a shelf end left on a row that is not shelved does not bring it "back from the shelf"', () => {
    const stale = row({ shelvedUntil: now - MIN });
    expect(applyAlarmEvent(stale, ev.expiry, now)).toEqual({ ok: true, changed: false });
    const staleAcked = row({ state: 'acknowledged', ackedBy: 'sam', shelvedUntil: now - MIN });
    expect(applyAlarmEvent(staleAcked, ev.expiry, now)).toEqual({ ok: true, changed: false });
  });

  it('a condition report that matches what the row already says changes nothing', () => {
    // Rows no transition produces, as a hand-edited or older store could hold them.
    expect(applyAlarmEvent(row({ state: 'acknowledged', active: false, ackedBy: 'sam' }), ev.active, now)).toEqual({ ok: true, changed: false });
    expect(applyAlarmEvent(row({ state: 'returned-unacknowledged', active: true }), ev.clear, now)).toEqual({ ok: true, changed: false });
  });

  it('refusals tell the operator what to do instead', () => {
    expect(applyAlarmEvent(start.shelvedActive, ev.ack, now)).toEqual({ ok: false, code: 'PW_ALARM_BAD_ACTION', message: 'alarm 1 is shelved; unshelve it before acknowledging' });
    expect(applyAlarmEvent(start.outOfService, ev.ack, now)).toEqual({
      ok: false, code: 'PW_ALARM_BAD_ACTION', message: 'alarm 1 is on a loop that is out of service; return the loop to service first',
    });
    expect(applyAlarmEvent(row({ state: 'acknowledged', ackedBy: null }), ev.ack, now)).toEqual({
      ok: false, code: 'PW_ALARM_BAD_ACTION', message: 'alarm 1 was already acknowledged by someone',
    });
  });
});
