import type { ParseOutcome } from '../../protocol/frame.js';
import { flushSplitter, initialSplitter, OVERLONG_LINE, splitChunk } from '../../protocol/lineSplitter.js';
import type { DecoderStream } from './decoderStream.js';

export type LineParser = (line: string) => ParseOutcome;
export type CancelTimer = () => void;
export type SetTimer = (callback: () => void, delayMs: number) => CancelTimer;

export interface HeardLine {
  /** Host monotonic time the chunk holding this line arrived, µs. */
  hostUs: number;
  outcome: ParseOutcome;
}

export interface ListenReport {
  lines: HeardLine[];
  /** Milliseconds from the start until the first line that parsed, or null if none did in time. */
  firstValidAfterMs: number | null;
  listenedMs: number;
  /** Set when the stream ended by itself (port closed, connection dropped). */
  endedBy: string | null;
}

export interface ListenOptions {
  stream: DecoderStream;
  parse: LineParser;
  /** Give up when no valid line came within this time (2 s: the decoder TICKs at least every 250 ms). */
  firstValidWithinMs: number;
  /** After a valid line, keep listening until this much time has passed in all (for the clock-drift check). */
  listenMs: number;
  nowUs: () => number;
  setTimer: SetTimer;
}

/** Listens to a decoder for a short while and records every line with its arrival time. */
export function listenToDecoder(options: ListenOptions): Promise<ListenReport> {
  const { stream, parse, nowUs, setTimer } = options;
  const startedUs = nowUs();
  const lines: HeardLine[] = [];
  let splitter = initialSplitter();
  let firstValidAfterMs: number | null = null;
  let done = false;

  return new Promise((resolve) => {
    const cancels: CancelTimer[] = [];
    const accept = (text: string, hostUs: number) => {
      const outcome = parse(text);
      lines.push({ hostUs, outcome });
      if (outcome.ok && firstValidAfterMs === null) firstValidAfterMs = (hostUs - startedUs) / 1000;
    };
    const finish = (endedBy: string | null) => {
      if (done) return;
      done = true;
      for (const cancel of cancels) cancel();
      const rest = flushSplitter(splitter);
      const hostUs = nowUs();
      // An unfinished last line is only garbage if nothing valid arrived; a look cut short mid-line is normal.
      if (firstValidAfterMs === null) {
        for (const text of rest.lines) accept(text, hostUs);
        for (let i = 0; i < rest.overlong; i++) accept(OVERLONG_LINE, hostUs);
      }
      resolve({ lines, firstValidAfterMs, listenedMs: (hostUs - startedUs) / 1000, endedBy });
    };

    stream.onData((text) => {
      if (done) return;
      const hostUs = nowUs();
      const result = splitChunk(splitter, text);
      splitter = result.state;
      for (const line of result.lines) accept(line, hostUs);
      for (let i = 0; i < result.overlong; i++) accept(OVERLONG_LINE, hostUs);
    });
    stream.onEnd((reason) => finish(reason));
    cancels.push(
      setTimer(() => {
        if (firstValidAfterMs === null) finish(null);
      }, options.firstValidWithinMs),
    );
    cancels.push(setTimer(() => finish(null), Math.max(options.listenMs, options.firstValidWithinMs)));
  });
}
