import { MAX_LINE_BYTES } from './frame.js';

/**
 * Pure incremental line splitter for the decoder stream. Chunks are text in which one character is
 * one received byte (the links decode the wire as latin1), so lengths here are byte counts.
 * A line longer than the protocol allows is never buffered: it is discarded up to its LF and counted.
 */
export interface SplitterState {
  /** The start of a line not yet ended by LF (at most MAX_LINE_BYTES characters). */
  readonly partial: string;
  /** True while throwing away the rest of an over-long line. */
  readonly discarding: boolean;
}

export interface SplitResult {
  state: SplitterState;
  /** Complete lines without their LF (a CR before it is kept: parseLine ignores it). */
  lines: string[];
  /** Over-long lines discarded in this chunk (counted when their LF arrives). */
  overlong: number;
  /** Where each discarded line stood: the index in `lines` it came before (keeps arrival order). */
  overlongBefore: number[];
}

/**
 * A stand-in for a discarded over-long line: a shell that can only pass lines on hands this to the
 * parser, which drops it as `too-long`, so the loss is still counted where every other drop is.
 */
export const OVERLONG_LINE = '#'.repeat(MAX_LINE_BYTES + 1);

export function initialSplitter(): SplitterState {
  return { partial: '', discarding: false };
}

export function splitChunk(state: SplitterState, chunk: string): SplitResult {
  const lines: string[] = [];
  const overlongBefore: number[] = [];
  let partial = state.partial;
  let discarding = state.discarding;
  let start = 0;
  // Stryker disable next-line EqualityOperator: a pass at start === chunk.length only appends an empty piece to the partial that was just emptied
  while (start <= chunk.length) {
    const lf = chunk.indexOf('\n', start);
    const end = lf === -1 ? chunk.length : lf;
    if (!discarding) {
      // Only the piece up to the limit (+1 to know it is over) is ever kept.
      // Stryker disable next-line ArithmeticOperator: a larger piece is dropped at once all the same (it is over the limit); only the size of that transient string differs
      const room = MAX_LINE_BYTES + 1 - partial.length;
      partial += chunk.slice(start, Math.min(end, start + room));
      if (partial.length > MAX_LINE_BYTES) {
        discarding = true;
        partial = '';
      }
    }
    if (lf === -1) break;
    if (discarding) overlongBefore.push(lines.length);
    else lines.push(partial);
    partial = '';
    discarding = false;
    start = lf + 1;
  }
  return { state: { partial, discarding }, lines, overlong: overlongBefore.length, overlongBefore };
}

/**
 * What is left when the stream ends (the port closed mid-line): the unfinished line, if any, so the
 * shell can pass it on to be dropped and counted rather than lose it silently.
 */
export function flushSplitter(state: SplitterState): SplitResult {
  if (state.discarding) return { state: initialSplitter(), lines: [], overlong: 1, overlongBefore: [0] };
  return { state: initialSplitter(), lines: state.partial === '' ? [] : [state.partial], overlong: 0, overlongBefore: [] };
}
