import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import type { DecoderEvent } from '../../src/protocol/decoderEvent.js';
import { initialDecoderSession, rebaseDecoderClock, recordOverlong, sessionCounters, stepDecoderSession, type DecoderSession } from '../../src/protocol/decoderSession.js';
import { DROP_REASONS } from '../../src/protocol/frame.js';
import { OVERLONG_LINE } from '../../src/protocol/lineSplitter.js';
import { MALFORMED } from './malformedLines.js';
import { refLine } from './referenceLine.js';

/** Feeds lines as given. */
function runLines(lines: string[]): { session: DecoderSession; events: DecoderEvent[] } {
  let session = initialDecoderSession();
  const events: DecoderEvent[] = [];
  for (const line of lines) {
    const step = stepDecoderSession(session, line);
    session = step.session;
    events.push(...step.events);
  }
  return { session, events };
}

/** Feeds frame bodies, each sealed with the reference CRC. */
function run(bodies: string[]): { session: DecoderSession; events: DecoderEvent[] } {
  let session = initialDecoderSession();
  const events: DecoderEvent[] = [];
  for (const body of bodies) {
    const step = stepDecoderSession(session, refLine(body));
    session = step.session;
    events.push(...step.events);
  }
  return { session, events };
}

const times = (events: DecoderEvent[]) => events.flatMap((e) => ('decoderUs' in e ? [e.decoderUs] : []));

// The protocol's wrap: time is a 32-bit µs count, 2^32 µs = 4294.967296 s.
const WRAP = 2 ** 32;

describe('decoder session: counting', () => {
  it('drops and counts every malformed form under its reason, never throwing', () => {
    const { session, events } = runLines(MALFORMED.map((m) => m.line));
    const c = sessionCounters(session);
    expect(c.lines).toBe(MALFORMED.length);
    expect(c.frames).toBe(0);
    expect(c.dropped).toBe(MALFORMED.length);
    for (const reason of DROP_REASONS) {
      expect(c.droppedBy[reason], reason).toBe(MALFORMED.filter((m) => m.reason === reason).length);
    }
    expect(events.every((e) => e.kind === 'dropped')).toBe(true);
  });

  it('counts over-long lines the splitter discarded, directly or through the stand-in line', () => {
    let session = recordOverlong(initialDecoderSession(), 2).session;
    session = stepDecoderSession(session, OVERLONG_LINE).session;
    expect(sessionCounters(session).droppedBy['too-long']).toBe(3);
    expect(sessionCounters(session).lines).toBe(3);
  });

  it('a bad line changes nothing but the counters', () => {
    const before = run(['HELLO 1 4 fw', 'TICK 0 100 NNNN']).session;
    fc.assert(
      fc.property(fc.string({ maxLength: 130, unit: 'binary' }), (junk) => {
        const step = stepDecoderSession(before, junk);
        if (step.events[0]?.kind !== 'dropped') return; // a random string that is a valid line: vanishingly rare
        const { counters: _a, ...restAfter } = step.session;
        const { counters: _b, ...restBefore } = before;
        expect(restAfter).toEqual(restBefore);
      }),
      { numRuns: 1000, seed: 31 },
    );
  });
});

describe('decoder session: frames to events', () => {
  it('turns EDGE, TICK and FAULT into events at decoder time', () => {
    const { events } = run(['HELLO 1 3 fw', 'EDGE 0 1000 2 H', 'EDGE 1 2000 2 N', 'TICK 2 250000 NNO', 'FAULT 3 250001 SUPPLY']);
    expect(events).toEqual([
      { kind: 'hello', version: 1, loops: 3, firmware: 'fw' },
      { kind: 'edge', input: 2, band: 'H', decoderUs: 1000 },
      { kind: 'edge', input: 2, band: 'N', decoderUs: 2000 },
      { kind: 'tick', bands: ['N', 'N', 'O'], decoderUs: 250000 },
      { kind: 'fault', code: 'SUPPLY', decoderUs: 250001 },
    ]);
  });

  it('accepts frames before any HELLO (joined mid-stream), without checking loop counts', () => {
    const { events, session } = run(['EDGE 500 10 40 H', 'TICK 501 20 NNNNNN']);
    expect(events.map((e) => e.kind)).toEqual(['edge', 'tick']);
    expect(sessionCounters(session).lost).toBe(0);
  });

  it('drops an EDGE past the announced loops and a TICK of the wrong length as range', () => {
    const { events, session } = run(['HELLO 1 4 fw', 'EDGE 0 10 5 H', 'TICK 1 20 NNN', 'TICK 2 30 NNNNN', 'EDGE 3 40 4 H']);
    expect(events.filter((e) => e.kind === 'dropped').map((e) => e.kind === 'dropped' && e.reason)).toEqual(['range', 'range', 'range']);
    const c = sessionCounters(session);
    expect(c.droppedBy.range).toBe(3);
    // Dropped lines never move the seq expectation (protocol v1: a bad line is dropped and counted,
    // nothing else), so seq 0..2 are missing when EDGE 3 comes — exactly as if their CRC had failed.
    expect(c.lost).toBe(3);
    expect(events.at(-1)).toEqual({ kind: 'edge', input: 4, band: 'H', decoderUs: 40 });
  });
});

describe('decoder session: a frame that does not fit the HELLO changes nothing but the drop counters', () => {
  // HELLO announced 4 loops; the session has seen TICK seq 0 at raw time 100 µs.
  const before = run(['HELLO 1 4 fw', 'TICK 0 100 NNNN']).session;
  const misfits = [
    ['EDGE for loop 5 of 4', 'EDGE 1 200 5 H'],
    // A far-off seq would otherwise count 59 999 frames lost (60000 − expected 1).
    ['EDGE for loop 5 of 4 with a far-off seq', 'EDGE 60000 200 5 N'],
    // 4e9 − 100 µs forward is past half the 2^32 wrap, i.e. ~295 s back: would count a silent restart.
    ['EDGE for loop 5 of 4 with a far-off time', 'EDGE 1 4000000000 5 N'],
    // 100 µs back is inside the late-frame slack: would count a late frame.
    ['TICK with 3 bands, stamped late', 'TICK 1 0 NNN'],
    // 3e9 − 100 µs forward is ~1295 s back: would count a silent restart and re-base the clock.
    ['TICK with 3 bands, clock far back', 'TICK 1 3000000000 NNN'],
    ['TICK with 5 bands', 'TICK 40000 300 NNNNN'],
  ] as const;

  it.each(misfits)('%s: only lines, dropped and droppedBy.range move; no event but the drop', (_label, body) => {
    const step = stepDecoderSession(before, refLine(body));
    expect(step.events.map((e) => e.kind)).toEqual(['dropped']);
    const { counters: afterCounters, ...restAfter } = step.session;
    const { counters: beforeCounters, ...restBefore } = before;
    expect(restAfter).toEqual(restBefore);
    expect(afterCounters).toEqual({
      ...beforeCounters,
      lines: beforeCounters.lines + 1,
      dropped: beforeCounters.dropped + 1,
      droppedBy: { ...beforeCounters.droppedBy, range: beforeCounters.droppedBy.range + 1 },
    });
  });

  it('the next good frame carries on as if the misfit never came: no gap, time from the last good frame', () => {
    let session = before;
    for (const [, body] of misfits) session = stepDecoderSession(session, refLine(body)).session;
    const next = stepDecoderSession(session, refLine('TICK 1 250100 NNNN'));
    // seq 1 is what TICK 0 led us to expect; raw 250100 − 100 = 250 000 µs on from decoder time 100.
    expect(next.events).toEqual([{ kind: 'tick', bands: ['N', 'N', 'N', 'N'], decoderUs: 250100 }]);
    expect(sessionCounters(next.session).lost).toBe(0);
    expect(sessionCounters(next.session).silentRestarts).toBe(0);
    expect(sessionCounters(next.session).droppedBy.range).toBe(misfits.length);
  });
});

describe('decoder session: sequence numbers', () => {
  it('counts a gap as lost frames, reported before the frame that revealed it', () => {
    const { events, session } = run(['TICK 10 100 N', 'TICK 11 200 N', 'TICK 15 300 N']);
    expect(events[2]).toEqual({ kind: 'lost', count: 3, decoderUs: 300 });
    expect(sessionCounters(session).lost).toBe(3);
  });

  it('65535 → 0 is the wrap, not a gap', () => {
    const { session, events } = run(['TICK 65534 1 N', 'TICK 65535 2 N', 'TICK 0 3 N', 'TICK 1 4 N']);
    expect(sessionCounters(session).lost).toBe(0);
    expect(events.some((e) => e.kind === 'lost')).toBe(false);
  });

  it('a gap across the wrap is counted modulo 65536', () => {
    // 65533 then 2: the missing ones are 65534, 65535, 0, 1.
    const { session } = run(['TICK 65533 1 N', 'TICK 2 2 N']);
    expect(sessionCounters(session).lost).toBe(4);
  });

  it('the same line twice (seq of the frame before) is a duplicate: dropped and counted, not 65 535 lost', () => {
    const { session, events } = run(['TICK 10 100 N', 'TICK 11 200 N', 'TICK 11 200 N', 'TICK 12 300 N']);
    expect(sessionCounters(session).lost).toBe(0);
    expect(sessionCounters(session).duplicates).toBe(1);
    expect(sessionCounters(session).frames).toBe(3);
    expect(events.map((e) => e.kind)).toEqual(['tick', 'tick', 'tick']);
  });

  it('a seq far behind, with the clock going on, is a restart (no lost count, the seq expectation starts afresh)', () => {
    const { session, events } = run(['TICK 500 100 N', 'TICK 501 200 N', 'TICK 3 300 N', 'TICK 4 400 N']);
    expect(events[2]).toEqual({ kind: 'fault', code: 'RESTART', decoderUs: 300 });
    expect(sessionCounters(session).silentRestarts).toBe(1);
    expect(sessionCounters(session).lost).toBe(0);
  });

  it('without a HELLO, a TICK or EDGE that does not fit the configured inputs is dropped as range', () => {
    let session = initialDecoderSession(8);
    for (const body of ['TICK 0 100 NNNNNNNNNNNN', 'EDGE 1 200 9 H', 'TICK 2 300 NNNNNNNN']) session = stepDecoderSession(session, refLine(body)).session;
    expect(sessionCounters(session).droppedBy.range).toBe(2);
    expect(sessionCounters(session).frames).toBe(1);
    // A HELLO's own count wins over the config's.
    session = stepDecoderSession(session, refLine('HELLO 1 12 fw')).session;
    session = stepDecoderSession(session, refLine('TICK 0 100 NNNNNNNNNNNN')).session;
    expect(sessionCounters(session).frames).toBe(3);
  });

  it('after HELLO the sequence starts again at 0', () => {
    const { session } = run(['TICK 900 1 N', 'HELLO 1 1 fw', 'TICK 0 5 N', 'TICK 1 6 N']);
    expect(sessionCounters(session).lost).toBe(0);
    const late = run(['HELLO 1 1 fw', 'TICK 2 5 N']).session;
    expect(sessionCounters(late).lost).toBe(2);
  });
});

describe('decoder session: time unwrap', () => {
  it('unwraps the 32-bit µs clock across its wrap into monotonic time', () => {
    const { events } = run(['TICK 0 4294967000 N', 'TICK 1 4294967295 N', 'TICK 2 0 N', 'TICK 3 204 N']);
    expect(times(events)).toEqual([4294967000, 4294967295, WRAP, WRAP + 204]);
  });

  it('keeps unwrapping over several wraps', () => {
    // A TICK every 200 ms for three wraps' worth (~3.6 h of decoder time).
    const step = 200_000;
    const bodies: string[] = [];
    const total = Math.ceil((3 * WRAP) / step) + 5;
    for (let i = 0; i < total; i++) bodies.push(`TICK ${i % 65536} ${(i * step) % WRAP} N`);
    const { events, session } = run(bodies);
    const t = times(events);
    expect(t.at(-1)).toBe((total - 1) * step);
    expect(sessionCounters(session).lost).toBe(0);
    for (let i = 1; i < t.length; i++) expect(t[i]! - t[i - 1]!).toBe(step);
  });

  it('after HELLO the clock restarts from 0 but decoder time carries on forward', () => {
    const { events } = run(['TICK 5 3000000 N', 'HELLO 1 1 fw', 'TICK 0 100 N']);
    expect(times(events)).toEqual([3000000, 3000100]);
  });

  it('a frame stamped a little earlier than the last keeps the last time (monotonic)', () => {
    const { events, session } = run(['TICK 0 5000 N', 'EDGE 1 4990 1 H', 'TICK 2 5100 N']);
    expect(times(events)).toEqual([5000, 5000, 5100]);
    expect(sessionCounters(session).lateFrames).toBe(1);
  });

  it('a clock jump back without HELLO is a missed restart: reported, time carries on from the last value (none invented)', () => {
    const { events, session } = run(['TICK 700 90000000 N', 'TICK 0 100 N', 'TICK 1 200 N']);
    expect(events[1]).toEqual({ kind: 'fault', code: 'RESTART', decoderUs: 90000000 });
    // Issue 16 item 2: adding the new raw 100 µs as elapsed was harmless here, but a raw time of
    // minutes after a silent restart dated every loop's next event minutes ahead and tripped them all.
    expect(times(events)).toEqual([90000000, 90000000, 90000000, 90000100]);
    expect(sessionCounters(session).silentRestarts).toBe(1);
    expect(sessionCounters(session).lost).toBe(0);
  });
});

describe('decoder session: pure at its boundary', () => {
  // The step copies its input once and mutates the copy: the session handed in must come back unchanged,
  // or a caller that keeps an old session (replay, the site state's history) would see it move.
  const deepFreeze = <T>(value: T): T => {
    if (value && typeof value === 'object') {
      for (const inner of Object.values(value)) deepFreeze(inner);
      Object.freeze(value);
    }
    return value;
  };
  it('never changes the session it is given, for any mix of good, bad, repeated and restarting lines', () => {
    const body = fc.oneof(
      fc.tuple(fc.integer({ min: 0, max: 65535 }), fc.integer({ min: 0, max: 2 ** 32 - 1 }), fc.integer({ min: 1, max: 8 }), fc.constantFrom('O', 'N', 'H'))
        .map(([seq, time, loop, band]) => refLine(`EDGE ${seq} ${time} ${loop} ${band}`)),
      fc.tuple(fc.integer({ min: 0, max: 65535 }), fc.integer({ min: 0, max: 2 ** 32 - 1 })).map(([seq, time]) => refLine(`TICK ${seq} ${time} NNNN`)),
      fc.constant(refLine('HELLO 1 4 fw')),
      fc.constantFrom(...MALFORMED.map((m) => m.line)),
    );
    fc.assert(
      fc.property(fc.array(body, { maxLength: 40 }), (lines) => {
        let session = deepFreeze(initialDecoderSession(4));
        for (const line of lines) {
          const before = structuredClone(session);
          const step = stepDecoderSession(session, line);
          expect(session).toEqual(before);
          session = deepFreeze(step.session);
        }
        const before = structuredClone(session);
        recordOverlong(session, 2);
        expect(session).toEqual(before);
      }),
    );
  });
});

/** The README's "Faults in the stream" table and rule 0, at the exact bounds it states. */
describe('decoder session: the stream-fault rules at their bounds (README)', () => {
  const restarts = (bodies: string[]) => run(bodies).events.filter((e) => e.kind === 'fault' && e.code === 'RESTART').length;

  it('time exactly 1 s back is a frame sent late; 1 s and 1 µs back is a restart whose HELLO was lost', () => {
    const late = run(['TICK 0 5000000 N', 'TICK 1 4000000 N']);
    expect(times(late.events)).toEqual([5000000, 5000000]);
    expect(sessionCounters(late.session)).toMatchObject({ lateFrames: 1, silentRestarts: 0 });
    expect(restarts(['TICK 0 5000000 N', 'TICK 1 3999999 N'])).toBe(1);
  });

  it('a step of 2^31 − 1 µs is forward (rule 0: less than 2^31); a step of exactly 2^31 is not, so the clock went back', () => {
    expect(times(run(['TICK 0 0 N', `TICK 1 ${2 ** 31 - 1} N`]).events)).toEqual([0, 2 ** 31 - 1]);
    expect(restarts(['TICK 0 0 N', `TICK 1 ${2 ** 31} N`])).toBe(1);
  });

  it('a seq 32 768 behind is a restart (the table: 2 to 32 768 back); 32 769 behind is 32 767 frames lost', () => {
    // After TICK 40000 the next seq is 40001: 40001 − 7233 = 32 768 back, 40001 − 7232 = 32 769 back.
    const back = run(['TICK 40000 100 N', 'TICK 7233 200 N']);
    expect(back.events.map((e) => e.kind)).toEqual(['tick', 'fault', 'tick']);
    expect(sessionCounters(back.session)).toMatchObject({ silentRestarts: 1, lost: 0 });
    const ahead = run(['TICK 40000 100 N', 'TICK 7232 200 N']);
    expect(ahead.events[1]).toEqual({ kind: 'lost', count: 32767, decoderUs: 200 });
    expect(sessionCounters(ahead.session).silentRestarts).toBe(0);
    // The near end of the table's range: 2 back (after 10 and 11, a 10 again) is a restart, 1 back a duplicate.
    expect(restarts(['TICK 10 100 N', 'TICK 11 200 N', 'TICK 10 300 N'])).toBe(1);
  });

  it('the clock and the seq both going back is one restart, reported once', () => {
    const { events, session } = run(['TICK 500 90000000 N', 'TICK 3 100 N']);
    expect(events.filter((e) => e.kind === 'fault')).toHaveLength(1);
    expect(sessionCounters(session).silentRestarts).toBe(1);
  });

  it('the first frame heard is never a duplicate, whatever its seq (joined mid-stream)', () => {
    const { events, session } = run(['TICK 65535 100 N']);
    expect(events.map((e) => e.kind)).toEqual(['tick']);
    expect(sessionCounters(session).duplicates).toBe(0);
  });

  it('the stored counters name the firmware and loops of the last HELLO, and count every HELLO', () => {
    const before = sessionCounters(run(['TICK 0 100 N']).session);
    expect(before.firmware).toBeNull();
    expect(before.loops).toBeNull();
    const after = sessionCounters(run(['HELLO 1 4 fw-1', 'TICK 0 100 NNNN', 'HELLO 1 2 fw-2']).session);
    expect(after).toMatchObject({ firmware: 'fw-2', loops: 2, hellos: 2 });
  });

  it('each over-long line the splitter discarded is one drop event, saying the limit', () => {
    const { events } = recordOverlong(initialDecoderSession(), 2);
    expect(events).toEqual([
      { kind: 'dropped', reason: 'too-long', detail: 'line longer than 120 bytes discarded' },
      { kind: 'dropped', reason: 'too-long', detail: 'line longer than 120 bytes discarded' },
    ]);
    expect(recordOverlong(initialDecoderSession(), 0).events).toEqual([]);
  });

  it('a misfit says what it did not fit: the HELLO, or the config before any HELLO', () => {
    const detailOf = (session: DecoderSession, body: string) => {
      const e = stepDecoderSession(session, refLine(body)).events[0]!;
      return e.kind === 'dropped' ? e.detail : null;
    };
    const configured = initialDecoderSession(8);
    expect(detailOf(configured, 'EDGE 0 100 9 H')).toBe('EDGE loop 9 is past the 8 loops the config gives this decoder (no HELLO yet)');
    const helloed = stepDecoderSession(configured, refLine('HELLO 1 4 fw')).session;
    expect(detailOf(helloed, 'TICK 0 100 NNN')).toBe('TICK has 3 bands but the decoder announced 4 loops');
    expect(detailOf(helloed, 'EDGE 0 100 4 H')).toBeNull();
  });

  it('rebasing the clock: a session that has heard no time is left as it is; after a HELLO, frames count on from the new time', () => {
    const fresh = initialDecoderSession(4);
    expect(rebaseDecoderClock(fresh, 2_000_000)).toEqual(fresh);
    let session = run(['TICK 0 5000000 N', 'HELLO 1 1 fw']).session;
    session = rebaseDecoderClock(session, 2_000_000);
    const next = stepDecoderSession(session, refLine('TICK 0 100 N'));
    expect(times(next.events)).toEqual([2_000_100]);
  });
});
