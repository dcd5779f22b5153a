import { describe, expect, it } from 'vitest';
import type { EscalationPolicy } from '../../src/alarms/escalationPolicy.js';
import { planEscalation } from '../../src/alarms/planEscalation.js';
import { MIN, T0, alarmRecord } from './alarmFixtures.js';

// Escalation planning at the edges of a policy, fake time; every expected time is written out by hand
// from the timetable rule in README "Escalation": step i at raise + after, repeat k at raise + k·repeat_every.

const raisedAt = (progress: Partial<ReturnType<typeof alarmRecord>['escalation']> = {}) =>
  alarmRecord({ escalation: { stepsDone: 0, repeatsDone: 0, nextAt: null, notified: [], ...progress } });

describe('planEscalation at the edges of a policy', () => {
  it('a step that names nobody sends no notice, and the next step still follows at its time', () => {
    const policy: EscalationPolicy = {
      name: 'gap',
      steps: [{ afterMs: 0, contactIds: [] }, { afterMs: 20 * MIN, contactIds: ['oncall'] }],
      repeatEveryMs: null,
      maxRepeats: 0,
    };
    const atRaise = planEscalation(raisedAt(), policy, T0);
    expect(atRaise.notices).toEqual([]);
    expect(atRaise.progress).toEqual({ stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * MIN, notified: [] });
  });

  it('someone named in two steps is on the list once, so each repeat reaches them once', () => {
    const policy: EscalationPolicy = {
      name: 'twice',
      steps: [{ afterMs: 0, contactIds: ['office'] }, { afterMs: 20 * MIN, contactIds: ['office', 'oncall'] }],
      repeatEveryMs: 30 * MIN,
      maxRepeats: 2,
    };
    const at0 = planEscalation(raisedAt(), policy, T0);
    const at20 = planEscalation(raisedAt(at0.progress), policy, T0 + 20 * MIN);
    expect(at20.progress.notified).toEqual(['office', 'oncall']);
    const at30 = planEscalation(raisedAt(at20.progress), policy, T0 + 30 * MIN);
    expect(at30.notices.map((n) => [n.notice, n.contactIds])).toEqual([['repeat', ['office', 'oncall']]]);
  });

  it('with no repeat interval it never repeats, however many repeats the policy allows', () => {
    const policy: EscalationPolicy = { name: 'steps-only', steps: [{ afterMs: 0, contactIds: ['office'] }, { afterMs: 20 * MIN, contactIds: ['oncall'] }], repeatEveryMs: null, maxRepeats: 3 };
    const at0 = planEscalation(raisedAt(), policy, T0);
    // The step at 20 min is the only thing left to wake for.
    expect(at0.progress.nextAt).toBe(T0 + 20 * MIN);
    const at20 = planEscalation(raisedAt(at0.progress), policy, T0 + 20 * MIN);
    expect(at20.progress.nextAt).toBeNull();
    const late = planEscalation(raisedAt(at20.progress), policy, T0 + 300 * MIN);
    expect(late.notices).toEqual([]);
    expect(late.progress).toEqual({ stepsDone: 2, repeatsDone: 0, nextAt: null, notified: ['office', 'oncall'] });
  });

  it('a zero repeat interval is read as no repeats, never a flood', () => {
    const policy: EscalationPolicy = { name: 'zero', steps: [{ afterMs: 0, contactIds: ['office'] }], repeatEveryMs: 0, maxRepeats: 3 };
    const at0 = planEscalation(raisedAt(), policy, T0);
    expect(at0.progress.nextAt).toBeNull();
    const later = planEscalation(raisedAt(at0.progress), policy, T0 + 60 * MIN);
    expect(later.notices).toEqual([]);
    expect(later.progress.repeatsDone).toBe(0);
  });

  it('wakes for a repeat that falls before the next step', () => {
    // Repeats every 30 min, second step only at 45 min: the 30-minute reminder comes first.
    const policy: EscalationPolicy = { name: 'slow', steps: [{ afterMs: 0, contactIds: ['office'] }, { afterMs: 45 * MIN, contactIds: ['oncall'] }], repeatEveryMs: 30 * MIN, maxRepeats: 4 };
    expect(planEscalation(raisedAt(), policy, T0).progress.nextAt).toBe(T0 + 30 * MIN);
  });

  it('after downtime, one repeat stands for exactly the slots missed since the last one', () => {
    const policy: EscalationPolicy = { name: 'r', steps: [{ afterMs: 0, contactIds: ['office'] }], repeatEveryMs: 30 * MIN, maxRepeats: 10 };
    // Told at 0, reminded at 30 min; then down until 2 h 5 min: slots 2, 3 and 4 (60, 90, 120 min) were missed.
    const { notices, progress } = planEscalation(raisedAt({ stepsDone: 1, repeatsDone: 1, notified: ['office'] }), policy, T0 + 125 * MIN);
    expect(notices).toEqual([{ contactIds: ['office'], notice: 'repeat', stepIndex: null, repeatSlot: 4, slotsCovered: 3 }]);
    expect(progress.nextAt).toBe(T0 + 150 * MIN);
  });

  it('with the clock stepped back before the raise time nothing is due yet', () => {
    const policy: EscalationPolicy = { name: 'r', steps: [{ afterMs: 0, contactIds: ['office'] }], repeatEveryMs: 30 * MIN, maxRepeats: 10 };
    const { notices, progress } = planEscalation(raisedAt({ stepsDone: 1, notified: ['office'] }), policy, T0 - 45 * MIN);
    expect(notices).toEqual([]);
    expect(progress).toEqual({ stepsDone: 1, repeatsDone: 0, nextAt: T0 + 30 * MIN, notified: ['office'] });
  });
});
