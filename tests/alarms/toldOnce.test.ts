import { describe, expect, it } from 'vitest';
import type { AlarmContext, AlarmInput } from '../../src/alarms/alarmInput.js';
import { initialAlarmBook, stepAlarms, type AlarmBook } from '../../src/alarms/alarmEngine.js';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import { HOUR, MIN, T0, type NotifyEffect } from './alarmFixtures.js';

/**
 * Nobody is told twice by one input. An alarm that clears (before anyone acknowledged) and comes back
 * while a step naming an already-notified contact falls due produces both a "raised again" notice for
 * everyone told so far and the step's notice; the step's contacts are left out of the first.
 */
const ctx: AlarmContext = {
  policies: {
    default: {
      name: 'default',
      steps: [
        { afterMs: 0, contactIds: ['office'] },
        { afterMs: 20 * MIN, contactIds: ['oncall', 'office'] },
      ],
      repeatEveryMs: 30 * MIN,
      maxRepeats: 10,
    },
  },
  maxShelveMs: 24 * HOUR,
};

const raise: AlarmInput = { kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: 'tripped', latched: false, policy: 'default' };
const clear: AlarmInput = { kind: 'clear', source: 'well-pit', condition: 'tripped' };

const noticesOf = (effects: AlarmEffect[]) => effects.filter((e): e is NotifyEffect => e.kind === 'notify');

/** Every contact with the number of notices they get from one input's effects. */
function perContact(effects: AlarmEffect[]): Record<string, number> {
  const counts: Record<string, number> = {};
  for (const n of noticesOf(effects)) for (const c of n.contactIds) counts[c] = (counts[c] ?? 0) + 1;
  return counts;
}

describe('one notice per contact per input', () => {
  it('an alarm back from clear while a step to an already-told contact falls due tells that contact once', () => {
    let book: AlarmBook = initialAlarmBook([], 1, []);
    const step = (input: AlarmInput, at: number) => {
      const result = stepAlarms(book, input, at, ctx);
      book = result.book;
      return result.effects;
    };
    expect(perContact(step(raise, T0))).toEqual({ office: 1 });
    expect(perContact(step(clear, T0 + 5 * MIN))).toEqual({ office: 1 }); // "back to normal", escalation stops
    const back = step(raise, T0 + 25 * MIN); // the 20-minute step (oncall, office) is overdue
    expect(perContact(back)).toEqual({ office: 1, oncall: 1 });
    expect(noticesOf(back).map((n) => [n.notice, n.contactIds])).toEqual([['escalated', ['oncall', 'office']]]);
  });
});
