import { describe, expect, it } from 'vitest';
import { initialAlarmBook, isOutOfService, nextWakeAt, openAlarms } from '../../src/alarms/alarmBook.js';
import type { AlarmBook } from '../../src/alarms/alarmBook.js';
import { MIN, T0, alarmRecord } from './alarmFixtures.js';

// The book as the daemon builds it at start-up from what the store holds, and the two questions the
// shell asks it: what is open (for the board) and when to wake up next (for the timer).

const book = (alarms: ReturnType<typeof alarmRecord>[], outOfService: Array<{ loopId: string; note: string }> = []): AlarmBook => ({
  alarms,
  nextId: 100,
  outOfService,
  suppressed: [],
});

describe('initialAlarmBook: start-up from the store', () => {
  it('keeps only open alarms, in id order, whatever order the store returned them in', () => {
    const rows = [
      alarmRecord({ id: 7 }),
      alarmRecord({ id: 2, state: 'normal', closedAt: T0 + MIN }),
      alarmRecord({ id: 3 }),
      alarmRecord({ id: 9 }),
      alarmRecord({ id: 1 }),
      alarmRecord({ id: 5 }),
    ];
    const started = initialAlarmBook(rows, 10, []);
    expect(started.alarms.map((a) => a.id)).toEqual([1, 3, 5, 7, 9]);
    // Nothing is held back from before the restart: the classifier reports present conditions again.
    expect(started.suppressed).toEqual([]);
  });

  it('never hands out an id the store already used, even when the caller\'s count is behind or not a number', () => {
    const rows = [alarmRecord({ id: 5 }), alarmRecord({ id: 9 })];
    expect(initialAlarmBook(rows, 0, []).nextId).toBe(10);
    expect(initialAlarmBook(rows, 3, []).nextId).toBe(10);
    expect(initialAlarmBook(rows, 9, []).nextId).toBe(10);
    expect(initialAlarmBook(rows, Number.NaN, []).nextId).toBe(10);
    expect(initialAlarmBook(rows, 2.5, []).nextId).toBe(10);
  });

  it('keeps the store\'s count when it is ahead (ids of closed alarms are not reused either)', () => {
    expect(initialAlarmBook([alarmRecord({ id: 5 })], 6, []).nextId).toBe(6);
    expect(initialAlarmBook([alarmRecord({ id: 5 })], 40, []).nextId).toBe(40);
    expect(initialAlarmBook([], 1, []).nextId).toBe(1);
    expect(initialAlarmBook([], Number.NaN, []).nextId).toBe(1);
  });

  it('carries the loops out of service with their reasons', () => {
    const started = initialAlarmBook([], 1, [{ loopId: 'hay-loft', note: 'roof repair' }]);
    expect(started.outOfService).toEqual([{ loopId: 'hay-loft', note: 'roof repair' }]);
  });
});

describe('openAlarms: the order the board lists them in', () => {
  it('lists alarms, then trouble, then system, oldest first within each', () => {
    const listed = openAlarms(
      book([
        alarmRecord({ id: 1, condition: 'mail-failing', priority: 'system' }),
        alarmRecord({ id: 2, condition: 'open', priority: 'trouble' }),
        alarmRecord({ id: 3, condition: 'tripped', priority: 'alarm' }),
        alarmRecord({ id: 4, condition: 'shorted', priority: 'trouble' }),
        alarmRecord({ id: 5, condition: 'tripped', priority: 'alarm', source: 'hay-loft', loopId: 'hay-loft' }),
        alarmRecord({ id: 6, condition: 'storage-failing', priority: 'system' }),
      ]),
    );
    expect(listed.map((a) => a.id)).toEqual([3, 5, 2, 4, 1, 6]);
  });

  it('keeps id order within one priority even when the book holds them out of order', () => {
    const listed = openAlarms(book([alarmRecord({ id: 8 }), alarmRecord({ id: 3 }), alarmRecord({ id: 5 }), alarmRecord({ id: 1 })]));
    expect(listed.map((a) => a.id)).toEqual([1, 3, 5, 8]);
  });
});

describe('nextWakeAt: when the shell must tick', () => {
  const waiting = (id: number, nextAt: number | null) =>
    alarmRecord({ id, escalation: { stepsDone: 1, repeatsDone: 0, nextAt, notified: ['office'] } });

  it('is the earliest of escalation times and shelf ends, in any order', () => {
    const shelved = alarmRecord({ id: 3, state: 'shelved', shelvedUntil: T0 + 45 * MIN });
    expect(nextWakeAt(book([waiting(1, T0 + 50 * MIN), waiting(2, T0 + 20 * MIN), shelved]))).toBe(T0 + 20 * MIN);
    expect(nextWakeAt(book([waiting(1, T0 + 20 * MIN), waiting(2, T0 + 50 * MIN), shelved]))).toBe(T0 + 20 * MIN);
    expect(nextWakeAt(book([waiting(1, T0 + 50 * MIN), shelved]))).toBe(T0 + 45 * MIN);
    expect(nextWakeAt(book([shelved, waiting(1, T0 + 50 * MIN)]))).toBe(T0 + 45 * MIN);
  });

  it('a single waiting alarm sets the wake time', () => {
    expect(nextWakeAt(book([waiting(1, T0 + 20 * MIN)]))).toBe(T0 + 20 * MIN);
  });

  it('an alarm with nothing pending does not cancel another one\'s wake-up', () => {
    expect(nextWakeAt(book([waiting(1, T0 + 20 * MIN), waiting(2, null)]))).toBe(T0 + 20 * MIN);
  });

  it('never wakes for an alarm nobody is waiting on: acknowledged, returned or out of service, whatever times its row still carries', () => {
    // Rows as an older store might hold them: a leftover escalation time and shelf end.
    const leftovers = { shelvedUntil: T0 + 5 * MIN, escalation: { stepsDone: 1, repeatsDone: 0, nextAt: T0 + 10 * MIN, notified: ['office'] } };
    const quiet = book([
      alarmRecord({ id: 1, state: 'acknowledged', ...leftovers }),
      alarmRecord({ id: 2, state: 'returned-unacknowledged', active: false, ...leftovers }),
      alarmRecord({ id: 3, state: 'out-of-service', ...leftovers }),
    ]);
    expect(nextWakeAt(quiet)).toBeNull();
    expect(nextWakeAt(book([]))).toBeNull();
  });
});

describe('isOutOfService', () => {
  const withHayLoftOut = book([], [{ loopId: 'hay-loft', note: 'roof repair' }, { loopId: 'barn', note: 'rewiring' }]);

  it('says which loops are out of service, and never a condition with no loop', () => {
    expect(isOutOfService(withHayLoftOut, 'hay-loft')).toBe(true);
    expect(isOutOfService(withHayLoftOut, 'barn')).toBe(true);
    expect(isOutOfService(withHayLoftOut, 'well-pit')).toBe(false);
    expect(isOutOfService(withHayLoftOut, null)).toBe(false);
    expect(isOutOfService(book([]), 'hay-loft')).toBe(false);
  });
});
