import { describe, expect, it } from 'vitest';
import type { EscalationPolicy } from '../../src/alarms/escalationPolicy.js';
import { planEscalation } from '../../src/alarms/planEscalation.js';
import type { AlarmRecord } from '../../src/alarms/alarmTypes.js';
import { HOUR, MIN, T0, alarmRecord, issueContext } from './alarmFixtures.js';

// Escalation timing with fake time, on the issue 3 example policy. Expected times are written out by hand.
const policy = issueContext().policies['default']!;

function runTo(alarm: AlarmRecord, now: number, using: EscalationPolicy = policy) {
  const plan = planEscalation(alarm, using, now);
  return { alarm: { ...alarm, escalation: plan.progress }, plan };
}

describe('planEscalation, issue 3 example', () => {
  it('tells the office at once and plans the on-call step for 20 minutes later', () => {
    const { plan } = runTo(alarmRecord(), T0);
    expect(plan.notices.map((n) => [n.notice, n.contactIds])).toEqual([['raised', ['office']]]);
    expect(plan.progress).toEqual({ stepsDone: 1, repeatsDone: 0, nextAt: T0 + 20 * MIN, notified: ['office'] });
  });

  it('does nothing before the next step is due', () => {
    const first = runTo(alarmRecord(), T0).alarm;
    const { plan } = runTo(first, T0 + 19 * MIN + 59_999);
    expect(plan.notices).toEqual([]);
    expect(plan.progress.nextAt).toBe(T0 + 20 * MIN);
  });

  it('follows 0, 20 min, then repeats to both at 30, 60, … 300 min and stops after 10 repeats', () => {
    let alarm = alarmRecord();
    let now = T0;
    const sent: Array<[number, string, string[]]> = [];
    for (let guard = 0; guard < 50; guard += 1) {
      const step = runTo(alarm, now);
      alarm = step.alarm;
      for (const n of step.plan.notices) sent.push([(now - T0) / MIN, n.notice, n.contactIds]);
      if (step.plan.progress.nextAt === null) break;
      now = step.plan.progress.nextAt;
    }
    const both = ['office', 'oncall'];
    expect(sent).toEqual([
      [0, 'raised', ['office']],
      [20, 'escalated', ['oncall']],
      [30, 'repeat', both], [60, 'repeat', both], [90, 'repeat', both], [120, 'repeat', both], [150, 'repeat', both],
      [180, 'repeat', both], [210, 'repeat', both], [240, 'repeat', both], [270, 'repeat', both], [300, 'repeat', both],
    ]);
    expect(alarm.escalation).toEqual({ stepsDone: 2, repeatsDone: 10, nextAt: null, notified: ['office', 'oncall'] });
  });

  it('after a jump fires each due step once and sends one repeat for all missed slots', () => {
    const first = runTo(alarmRecord(), T0).alarm;
    // Down from 0:01 to 1:35: the 20-min step and the slots at 30, 60, 90 min were missed.
    const { plan } = runTo(first, T0 + 95 * MIN);
    expect(plan.notices.map((n) => [n.notice, n.contactIds, n.slotsCovered])).toEqual([
      ['escalated', ['oncall'], 0],
      // oncall has just been told by the step, so the catch-up repeat goes to the office only.
      ['repeat', ['office'], 3],
    ]);
    expect(plan.progress).toEqual({ stepsDone: 2, repeatsDone: 3, nextAt: T0 + 120 * MIN, notified: ['office', 'oncall'] });
  });

  it('after a jump past the end sends one of each and finishes', () => {
    const { plan } = runTo(alarmRecord(), T0 + 10 * HOUR);
    expect(plan.notices.map((n) => n.notice)).toEqual(['raised', 'escalated']);
    // Both contacts were told by steps in this call, so the repeat has nobody left to go to.
    expect(plan.progress).toEqual({ stepsDone: 2, repeatsDone: 10, nextAt: null, notified: ['office', 'oncall'] });
  });

  it('resumes from its counters after being stopped (nextAt cleared by the caller)', () => {
    const at30 = runTo(runTo(runTo(alarmRecord(), T0).alarm, T0 + 20 * MIN).alarm, T0 + 30 * MIN).alarm;
    const stopped = { ...at30, escalation: { ...at30.escalation, nextAt: null } };
    const { plan } = runTo(stopped, T0 + 45 * MIN);
    expect(plan.notices).toEqual([]);
    expect(plan.progress.nextAt).toBe(T0 + 60 * MIN);
  });
});

describe('planEscalation, other policies', () => {
  it('without repeats finishes after the last step', () => {
    const once: EscalationPolicy = { name: 'once', steps: [{ afterMs: 0, contactIds: ['office'] }], repeatEveryMs: null, maxRepeats: 10 };
    expect(runTo(alarmRecord(), T0, once).plan.progress.nextAt).toBeNull();
  });

  it('with max_repeats 0 never repeats', () => {
    const noRepeat: EscalationPolicy = { ...policy, maxRepeats: 0 };
    const { plan } = runTo(alarmRecord(), T0 + 5 * HOUR, noRepeat);
    expect(plan.notices.map((n) => n.notice)).toEqual(['raised', 'escalated']);
    expect(plan.progress.nextAt).toBeNull();
  });

  it('with a delayed first step tells nobody at raise time', () => {
    const later: EscalationPolicy = { name: 'later', steps: [{ afterMs: 5 * MIN, contactIds: ['office'] }], repeatEveryMs: 30 * MIN, maxRepeats: 2 };
    const atRaise = runTo(alarmRecord(), T0, later);
    expect(atRaise.plan.notices).toEqual([]);
    expect(atRaise.plan.progress.nextAt).toBe(T0 + 5 * MIN);
    const atFive = runTo(atRaise.alarm, T0 + 5 * MIN, later);
    expect(atFive.plan.notices.map((n) => [n.notice, n.contactIds])).toEqual([['raised', ['office']]]);
    expect(atFive.plan.progress.nextAt).toBe(T0 + 30 * MIN);
  });

  it('repeats only to those told so far when a repeat falls before a later step', () => {
    const slow: EscalationPolicy = {
      name: 'slow',
      steps: [{ afterMs: 0, contactIds: ['office'] }, { afterMs: 60 * MIN, contactIds: ['oncall'] }],
      repeatEveryMs: 30 * MIN,
      maxRepeats: 4,
    };
    const at0 = runTo(alarmRecord(), T0, slow).alarm;
    const at30 = runTo(at0, T0 + 30 * MIN, slow);
    expect(at30.plan.notices.map((n) => [n.notice, n.contactIds])).toEqual([['repeat', ['office']]]);
    // At 60 min the step and a repeat fall together: oncall gets the step, the office the repeat.
    const at60 = runTo(at30.alarm, T0 + 60 * MIN, slow);
    expect(at60.plan.notices.map((n) => [n.notice, n.contactIds])).toEqual([['escalated', ['oncall']], ['repeat', ['office']]]);
    expect(at60.plan.progress.nextAt).toBe(T0 + 90 * MIN);
  });
});
