import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { AlarmInput } from '../../src/alarms/alarmEngine.js';
import { initialAlarmBook, nextWakeAt, stepAlarms } from '../../src/alarms/alarmEngine.js';
import { CONDITIONS } from '../../src/model/condition.js';
import { HOUR, MIN, T0, issueContext } from './alarmFixtures.js';

// Random operation sequences: the engine never throws, a refusal has no effects, and the book keeps its invariants.
const ctx = issueContext();
const loops = ['well-pit', 'hay-loft'] as const;

const input: fc.Arbitrary<AlarmInput> = fc.oneof(
  fc.record({ kind: fc.constant('raise' as const), loopId: fc.constantFrom(...loops), condition: fc.constantFrom(...CONDITIONS), latched: fc.boolean(), policy: fc.constantFrom('default', null, 'missing') })
    .map((r) => ({ ...r, source: r.loopId })),
  fc.record({ kind: fc.constant('clear' as const), source: fc.constantFrom(...loops), condition: fc.constantFrom(...CONDITIONS) }),
  fc.record({ kind: fc.constant('ack' as const), alarmId: fc.integer({ min: -1, max: 12 }), actor: fc.constantFrom('sam', ''), note: fc.option(fc.string()) }),
  fc.record({ kind: fc.constant('shelve' as const), alarmId: fc.integer({ min: 0, max: 12 }), actor: fc.constant('sam'), durationMs: fc.integer({ min: -MIN, max: 30 * HOUR }), reason: fc.string() }),
  fc.record({ kind: fc.constant('unshelve' as const), alarmId: fc.integer({ min: 0, max: 12 }), actor: fc.constant('kim') }),
  fc.record({ kind: fc.constant('out-of-service' as const), loopId: fc.constantFrom(...loops), actor: fc.constant('sam'), note: fc.string() }),
  fc.record({ kind: fc.constant('return-to-service' as const), loopId: fc.constantFrom(...loops), actor: fc.constant('sam'), note: fc.option(fc.string()) }),
  fc.constant({ kind: 'tick' as const }),
);

describe('alarm engine under random operations (fast-check)', () => {
  it('keeps its invariants', () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(fc.integer({ min: 0, max: 40 * MIN }), input), { maxLength: 60 }), (ops) => {
        let book = initialAlarmBook([], 1, []);
        let now = T0;
        for (const [gap, op] of ops) {
          now += gap;
          const result = stepAlarms(book, op, now, ctx);
          if (result.error) {
            expect(result.effects).toEqual([]);
            expect(result.book).toBe(book);
            expect(result.error.message.length).toBeGreaterThan(0);
            continue;
          }
          book = result.book;
          const keys = book.alarms.map((a) => `${a.source}/${a.condition}`);
          expect(new Set(keys).size).toBe(keys.length); // one open alarm per source and condition
          for (const alarm of book.alarms) {
            expect(alarm.closedAt).toBeNull();
            expect(alarm.id).toBeLessThan(book.nextId);
          }
          for (const effect of result.effects) {
            if (effect.kind !== 'notify') continue;
            expect(effect.contactIds.length).toBeGreaterThan(0);
            const after = book.alarms.find((a) => a.id === effect.alarmId);
            // Nothing but the shelving notice itself goes out for a hidden alarm.
            if (after?.state === 'shelved') expect(effect.notice).toBe('shelved');
            expect(after?.state).not.toBe('out-of-service');
          }
          const wake = nextWakeAt(book);
          if (wake !== null && wake <= now) {
            // Anything overdue must be picked up by the very next tick.
            expect(stepAlarms(book, { kind: 'tick' }, now, ctx).effects.length).toBeGreaterThan(0);
          }
          if (op.kind === 'tick') {
            // After a tick nothing is left overdue, so the shell's single timer can never spin.
            expect(wake === null || wake > now).toBe(true);
          }
        }
      }),
      { numRuns: 300, seed: 20261201 },
    );
  });
});
