import { describe, expect, it } from 'vitest';
import { listenToDecoder } from '../../../src/ops/doctor/listenToDecoder.js';
import type { DecoderStream } from '../../../src/ops/doctor/decoderStream.js';
import { parseLine } from '../../../src/protocol/parseLine.js';
import { line } from './protocolLines.js';

/** A stream the test feeds by hand, and a clock with timers that fire only when the test says so. */
function harness() {
  let nowMs = 0;
  const timers: Array<{ at: number; callback: () => void; cancelled: boolean }> = [];
  let onData: (text: string) => void = () => {};
  let onEnd: (reason: string) => void = () => {};
  let closed = false;
  const stream: DecoderStream = {
    onData: (l) => (onData = l),
    onEnd: (l) => (onEnd = l),
    close: async () => {
      closed = true;
    },
  };
  return {
    stream,
    nowUs: () => nowMs * 1000,
    setTimer: (callback: () => void, delayMs: number) => {
      const timer = { at: nowMs + delayMs, callback, cancelled: false };
      timers.push(timer);
      return () => (timer.cancelled = true);
    },
    advance(ms: number) {
      nowMs += ms;
      for (const t of timers) if (!t.cancelled && t.at <= nowMs) (t.cancelled = true), t.callback();
    },
    send: (text: string) => onData(text),
    end: (reason: string) => onEnd(reason),
    get closed() {
      return closed;
    },
  };
}

describe('listenToDecoder', () => {
  it('gives up at the deadline when nothing valid came', async () => {
    const h = harness();
    const done = listenToDecoder({ stream: h.stream, parse: parseLine, firstValidWithinMs: 2000, listenMs: 5000, nowUs: h.nowUs, setTimer: h.setTimer });
    h.advance(500);
    h.send('garbage without checksum\n');
    h.advance(1500);
    const report = await done;
    expect(report.firstValidAfterMs).toBeNull();
    expect(report.listenedMs).toBe(2000);
    expect(report.lines).toHaveLength(1);
    expect(report.lines[0]!.outcome).toMatchObject({ ok: false, reason: 'syntax' });
  });

  it('keeps listening for the whole window once the decoder answers, across split chunks', async () => {
    const h = harness();
    const done = listenToDecoder({ stream: h.stream, parse: parseLine, firstValidWithinMs: 2000, listenMs: 5000, nowUs: h.nowUs, setTimer: h.setTimer });
    h.advance(120);
    const hello = line('HELLO 1 8 fw-1.0');
    h.send(hello.slice(0, 7));
    h.advance(5);
    h.send(hello.slice(7) + line('TICK 0 1000 NNNNNNNN'));
    h.advance(2000); // past the first deadline: must not stop now
    h.send(line('TICK 1 2001000 NNNNNNNN'));
    h.advance(2875);
    const report = await done;
    expect(report.firstValidAfterMs).toBe(125);
    expect(report.listenedMs).toBe(5000);
    expect(report.lines.map((l) => l.outcome.ok)).toEqual([true, true, true]);
    expect(report.lines.map((l) => l.hostUs)).toEqual([125_000, 125_000, 2_125_000]);
  });

  it('reports a stream that ends by itself and counts an unfinished line', async () => {
    const h = harness();
    const done = listenToDecoder({ stream: h.stream, parse: parseLine, firstValidWithinMs: 2000, listenMs: 5000, nowUs: h.nowUs, setTimer: h.setTimer });
    h.send('TICK 0 10 N');
    h.end('the port closed (cable unplugged?)');
    const report = await done;
    expect(report.endedBy).toContain('cable');
    expect(report.lines).toHaveLength(1);
    expect(report.lines[0]!.outcome.ok).toBe(false);
  });
});
