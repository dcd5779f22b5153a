import type { DecoderEvent } from '../../src/protocol/decoderEvent.js';
import { initialDecoderSession, sessionCounters, stepDecoderSession } from '../../src/protocol/decoderSession.js';
import type { SimLine } from '../../src/sim/createSimulator.js';

/** Runs simulator output through the real decoder session, as the daemon would. */
export function decodeAll(lines: readonly SimLine[]) {
  let session = initialDecoderSession();
  const events: Array<DecoderEvent & { atUs: number }> = [];
  for (const { atUs, line } of lines) {
    const step = stepDecoderSession(session, line);
    session = step.session;
    for (const e of step.events) events.push({ ...e, atUs });
  }
  return { events, counters: sessionCounters(session) };
}

/** Per input, the H spans seen: [startUs, widthUs] on decoder time. */
export function highSpans(events: ReturnType<typeof decodeAll>['events'], input: number): Array<[number, number]> {
  const spans: Array<[number, number]> = [];
  let start: number | null = null;
  for (const e of events) {
    if (e.kind !== 'edge' || e.input !== input) continue;
    if (e.band === 'H') start = e.decoderUs;
    else if (start !== null) {
      spans.push([start, e.decoderUs - start]);
      start = null;
    }
  }
  return spans;
}
