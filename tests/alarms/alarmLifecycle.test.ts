import { describe, expect, it } from 'vitest';
import type { LifecycleEvent } from '../../src/alarms/alarmLifecycle.js';
import { applyAlarmEvent } from '../../src/alarms/alarmLifecycle.js';
import type { AlarmRecord } from '../../src/alarms/alarmTypes.js';
import { MIN, T0, lifecycleEvents, lifecycleStarts } from './alarmFixtures.js';

/*
 * Transition table checked against the alarm state transition diagram of
 * ANSI/ISA-18.2-2016, "Management of Alarm Systems for the Process Industries", and its international
 * counterpart IEC 62682 (same state model). The diagram's states as we map them:
 *   normal (process normal, acknowledged)            → 'normal'
 *   unacknowledged alarm                             → 'unacknowledged', active
 *   acknowledged alarm                               → 'acknowledged'
 *   returned to normal, unacknowledged               → 'returned-unacknowledged'
 *   latched alarm (cleared, awaiting acknowledgement) → 'unacknowledged', active false, latched
 *   shelved                                          → 'shelved'
 *   out of service                                   → 'out-of-service'
 * ("Suppressed by design" is not modelled: pairwatch has no design-time suppression.)
 * Rows marked 'isa' follow a transition drawn in that diagram; the diagram is cited from memory of the
 * standard, not from a copy at hand. Rows marked 'ours' are pairwatch's own decisions where the
 * standard leaves the choice to the alarm system (refusals, what a hidden alarm does with a clear,
 * where a shelf returns a cleared alarm to, fresh alarms after return to service).
 */

const now = T0 + 10 * MIN;

const start = lifecycleStarts(now);
const ev = lifecycleEvents(now);

type Row = [from: keyof typeof start, event: keyof typeof ev, to: AlarmRecord['state'], active: boolean, closed: boolean, origin: 'isa' | 'ours'];

const transitions: Row[] = [
  ['normal', 'active', 'unacknowledged', true, false, 'isa'], // alarm occurs
  ['unackActive', 'ack', 'acknowledged', true, false, 'isa'], // operator acknowledges
  ['unackActive', 'clear', 'returned-unacknowledged', false, false, 'isa'], // returns to normal unacknowledged
  ['acked', 'clear', 'normal', false, true, 'isa'], // acknowledged alarm returns to normal
  ['returned', 'ack', 'normal', false, true, 'isa'], // acknowledge after return to normal
  ['returned', 'active', 'unacknowledged', true, false, 'isa'], // re-alarm before acknowledgement
  ['unackLatched', 'clear', 'unacknowledged', false, false, 'isa'], // latched alarm holds after the process clears
  ['latchedCleared', 'ack', 'normal', false, true, 'isa'], // latched alarm reset by the operator
  ['unackActive', 'shelve', 'shelved', true, false, 'isa'],
  ['acked', 'shelve', 'shelved', true, false, 'isa'],
  ['returned', 'shelve', 'shelved', false, false, 'isa'],
  ['shelvedActive', 'unshelve', 'unacknowledged', true, false, 'isa'], // unshelved, still in alarm: annunciated again
  ['shelvedActive', 'expiry', 'unacknowledged', true, false, 'isa'], // shelf time ends by itself
  ['shelvedAckedCleared', 'expiry', 'normal', false, true, 'isa'], // unshelved with the process normal
  ['unackActive', 'remove', 'out-of-service', true, false, 'isa'],
  ['acked', 'remove', 'out-of-service', true, false, 'isa'],
  ['shelvedActive', 'remove', 'out-of-service', true, false, 'isa'],
  ['outOfService', 'back', 'normal', true, true, 'isa'], // returned to service: re-evaluated (the engine raises a fresh alarm)
  ['latchedCleared', 'active', 'unacknowledged', true, false, 'ours'], // condition back while latched: same alarm, told again
  ['shelvedUnackedCleared', 'expiry', 'returned-unacknowledged', false, false, 'ours'], // never acknowledged: stays listed
  ['shelvedLatchedCleared', 'expiry', 'unacknowledged', false, false, 'ours'], // latched: still awaits acknowledgement
  ['shelvedActive', 'clear', 'shelved', false, false, 'ours'], // hidden: recorded, resolved when it comes back
  ['shelvedUnackedCleared', 'active', 'shelved', true, false, 'ours'],
  ['outOfService', 'clear', 'out-of-service', false, false, 'ours'],
  ['outOfServiceCleared', 'active', 'out-of-service', true, false, 'ours'],
  ['outOfServiceCleared', 'back', 'normal', false, true, 'ours'],
];

describe('alarm lifecycle: ANSI/ISA-18.2-2016 alarm state transition diagram (IEC 62682)', () => {
  it.each(transitions)('%s + %s → %s (active %s, closed %s; %s)', (from, event, to, active, isClosed) => {
    const outcome = applyAlarmEvent(start[from], ev[event], now);
    expect(outcome.ok && outcome.changed).toBe(true);
    if (!outcome.ok || !outcome.changed) return;
    expect(outcome.alarm.state).toBe(to);
    expect(outcome.alarm.active).toBe(active);
    expect(outcome.alarm.closedAt).toBe(isClosed ? now : from === 'normal' ? null : start[from].closedAt);
  });

  it('records who acknowledged, when, and their note', () => {
    const outcome = applyAlarmEvent(start.unackActive, ev.ack, now);
    expect(outcome.ok && outcome.changed && outcome.alarm).toMatchObject({ ackedAt: now, ackedBy: 'sam', note: 'checked' });
  });

  it('re-annunciation after the shelf resets the earlier acknowledgement', () => {
    const acked = applyAlarmEvent(start.acked, ev.shelve, now);
    if (!acked.ok || !acked.changed) throw new Error('shelve refused');
    const back = applyAlarmEvent(acked.alarm, ev.unshelve, now + MIN);
    expect(back.ok && back.changed && back.alarm).toMatchObject({ state: 'unacknowledged', ackedAt: null, ackedBy: null, shelvedUntil: null, shelveReason: null });
  });

  it('says what escalation does: stops on acknowledge, shelve, non-latched clear and removal; resumes on re-alarm and unshelve', () => {
    const directive = (from: keyof typeof start, event: keyof typeof ev) => {
      const o = applyAlarmEvent(start[from], ev[event], now);
      return o.ok && o.changed ? [o.escalation, o.notice] : null;
    };
    expect(directive('unackActive', 'ack')).toEqual(['stop', 'acknowledged']);
    expect(directive('unackActive', 'shelve')).toEqual(['stop', 'shelved']);
    expect(directive('unackActive', 'clear')).toEqual(['stop', 'cleared']);
    expect(directive('unackLatched', 'clear')).toEqual(['continue', 'cleared']);
    expect(directive('unackActive', 'remove')).toEqual(['stop', null]);
    expect(directive('returned', 'active')).toEqual(['resume', 'raised']);
    expect(directive('shelvedActive', 'unshelve')).toEqual(['resume', 'unshelved']);
    expect(directive('shelvedAckedCleared', 'expiry')).toEqual(['stop', 'cleared']);
    expect(directive('shelvedActive', 'clear')).toEqual(['continue', null]);
  });
});

describe('alarm lifecycle: refused and ignored events (ours)', () => {
  const refused: Array<[keyof typeof start, LifecycleEvent, RegExp]> = [
    ['acked', ev.ack, /already acknowledged by sam/],
    ['normal', ev.ack, /already closed/],
    ['shelvedActive', ev.ack, /shelved/],
    ['outOfService', ev.ack, /out of service/],
    ['shelvedActive', ev.shelve, /already shelved/],
    ['outOfService', ev.shelve, /out of service/],
    ['normal', ev.shelve, /already closed/],
    ['unackActive', ev.unshelve, /not shelved/],
    ['unackActive', { kind: 'shelve', actor: 'sam', until: now, reason: 'r' }, /in the future/],
  ];
  it.each(refused)('%s + %j is refused', (from, event, message) => {
    const outcome = applyAlarmEvent(start[from], event, now);
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) {
      expect(outcome.code).toBe('PW_ALARM_BAD_ACTION');
      expect(outcome.message).toMatch(message);
    }
  });

  const ignored: Array<[keyof typeof start, keyof typeof ev]> = [
    ['unackActive', 'active'], // already active: raising again changes nothing
    ['acked', 'active'],
    ['returned', 'clear'], // already clear
    ['latchedCleared', 'clear'],
    ['unackActive', 'expiry'], // not shelved
    ['unackActive', 'back'], // not out of service
    ['outOfService', 'remove'], // already out
  ];
  it.each(ignored)('%s + %s changes nothing', (from, event) => {
    expect(applyAlarmEvent(start[from], ev[event], now)).toEqual({ ok: true, changed: false });
  });

  it('does not expire a shelf early', () => {
    const shelved = { ...start.shelvedActive, shelvedUntil: now + 1 };
    expect(applyAlarmEvent(shelved, ev.expiry, now)).toEqual({ ok: true, changed: false });
  });

  it('never expires a shelf that has no end time; only an operator can unshelve it (ours)', () => {
    // A record written without an end time (the type allows it) has no moment at which the shelf is over,
    // so the clock must not bring it back into view on its own.
    const openEnded = { ...start.shelvedActive, shelvedUntil: null };
    expect(applyAlarmEvent(openEnded, ev.expiry, now + 365 * 24 * 60 * MIN)).toEqual({ ok: true, changed: false });
    const unshelved = applyAlarmEvent(openEnded, ev.unshelve, now);
    expect(unshelved.ok && unshelved.changed && unshelved.alarm.state).toBe('unacknowledged');
  });
});
