import type { DecoderEvent } from './decoderEvent.js';
import { DROP_REASONS, MAX_LINE_BYTES, SEQ_MODULO, TIME_MODULO, type DropReason, type Frame } from './frame.js';
import { parseLine } from './parseLine.js';

/**
 * Pure per-connection state of one decoder link: what the last HELLO said, the sequence number and
 * clock expectations, and the counters. `stepDecoderSession` turns one line into decoder events on
 * a monotonic, unwrapped decoder time.
 *
 * Time: `decoderUs` is the decoder's own µs count, unwrapped across the 32-bit wrap. It starts at the
 * first frame's raw time and never goes backwards within a session: after a HELLO (the decoder
 * restarted, its clock from 0) time continues from the last value seen plus the new raw time. A
 * restart whose HELLO was lost (the clock more than LATE_FRAME_SLACK_US back, or the seq far behind)
 * continues from the last value seen: how long the decoder was down is not known, so none is invented.
 *
 * Sequence: the seq the last frame carried, again, is a duplicate line — dropped and counted under
 * `duplicates`, never as 65 535 lost frames.
 */
export interface DecoderCounters {
  /** Every line handed in, good or bad. */
  readonly lines: number;
  /** Lines accepted as frames (HELLO included). */
  readonly frames: number;
  /** Lines dropped, in total and by reason. */
  readonly dropped: number;
  readonly droppedBy: Readonly<Record<DropReason, number>>;
  /** Frames missing by sequence number (gaps, counted modulo 65536). */
  readonly lost: number;
  readonly hellos: number;
  /** The clock jumped back without a HELLO: a restart whose HELLO we missed. */
  readonly silentRestarts: number;
  /** Frames stamped slightly earlier than the one before; given the previous time. */
  readonly lateFrames: number;
  /** Frames carrying the seq of the frame before (a line received twice): dropped, not applied. */
  readonly duplicates: number;
}

export interface DecoderSession {
  readonly hello: { readonly loops: number; readonly firmware: string } | null;
  /** The seq the next EDGE/TICK/FAULT should carry; null until one is seen (we may join mid-stream). */
  readonly expectedSeq: number | null;
  /** Raw 32-bit time of the latest frame, the unwrap anchor; null after a restart. */
  readonly lastRawTime: number | null;
  /** Unwrapped time the raw clock counts from since the last (re)start. */
  readonly baseUs: number;
  readonly lastDecoderUs: number | null;
  /** Inputs the config says the decoder has: until a HELLO announces its own count, frames must fit this. */
  readonly configuredLoops: number | null;
  readonly counters: DecoderCounters;
}

/** A clock step back of up to this much is a frame sent late (queued edge), not a restart. */
export const LATE_FRAME_SLACK_US = 1_000_000;
const HALF_WRAP = TIME_MODULO / 2;

export function initialDecoderSession(configuredLoops: number | null = null): DecoderSession {
  return {
    hello: null,
    expectedSeq: null,
    lastRawTime: null,
    baseUs: 0,
    lastDecoderUs: null,
    configuredLoops,
    counters: {
      lines: 0,
      frames: 0,
      dropped: 0,
      droppedBy: Object.fromEntries(DROP_REASONS.map((r) => [r, 0])) as Record<DropReason, number>,
      lost: 0,
      hellos: 0,
      silentRestarts: 0,
      lateFrames: 0,
      duplicates: 0,
    },
  };
}

export interface SessionStep {
  session: DecoderSession;
  events: DecoderEvent[];
}

export function stepDecoderSession(session: DecoderSession, line: string): SessionStep {
  // Copy in, mutate privately, hand back (as stepLoop does): the caller's session is never changed,
  // and a line costs one copy of the session and its counters rather than one per field that moves.
  const next = privateCopy(session);
  next.counters.lines += 1;
  const outcome = parseLine(line);
  if (!outcome.ok) return { session: next, events: [drop(next, outcome.reason, outcome.detail)] };
  return { session: next, events: acceptFrame(next, outcome.frame) };
}

/** Over-long lines the splitter discarded: each is one more `too-long` drop. */
export function recordOverlong(session: DecoderSession, count: number): SessionStep {
  const next = privateCopy(session);
  const events: DecoderEvent[] = [];
  for (let i = 0; i < count; i++) {
    next.counters.lines += 1;
    events.push(drop(next, 'too-long', `line longer than ${MAX_LINE_BYTES} bytes discarded`));
  }
  return { session: next, events };
}

/** The counters the shell stores and shows (decoder_sessions.frames / bad_frames / lost_frames). */
export function sessionCounters(session: DecoderSession): DecoderCounters & { lastDecoderUs: number | null; firmware: string | null; loops: number | null } {
  return { ...session.counters, lastDecoderUs: session.lastDecoderUs, firmware: session.hello?.firmware ?? null, loops: session.hello?.loops ?? null };
}

type Writable<T> = { -readonly [K in keyof T]: T[K] };
type PrivateSession = Writable<Omit<DecoderSession, 'counters'>> & { counters: Writable<DecoderCounters> };

/**
 * Field by field rather than by spread: V8 builds these literals with one fixed shape, several
 * times faster than spreading (it is on every line). Every field is required, so one left out here
 * does not compile.
 */
function privateCopy(session: DecoderSession): PrivateSession {
  const c = session.counters;
  return {
    hello: session.hello,
    expectedSeq: session.expectedSeq,
    lastRawTime: session.lastRawTime,
    baseUs: session.baseUs,
    lastDecoderUs: session.lastDecoderUs,
    configuredLoops: session.configuredLoops,
    counters: {
      lines: c.lines,
      frames: c.frames,
      dropped: c.dropped,
      droppedBy: c.droppedBy,
      lost: c.lost,
      hellos: c.hellos,
      silentRestarts: c.silentRestarts,
      lateFrames: c.lateFrames,
      duplicates: c.duplicates,
    },
  };
}

function drop(session: PrivateSession, reason: DropReason, detail: string): DecoderEvent {
  const c = session.counters;
  c.dropped += 1;
  // The per-reason table is shared with earlier sessions until a drop: copied only here, where it changes.
  c.droppedBy = { ...c.droppedBy, [reason]: c.droppedBy[reason] + 1 };
  return { kind: 'dropped', reason, detail };
}

function acceptFrame(session: PrivateSession, frame: Frame): DecoderEvent[] {
  const counters = session.counters;
  if (frame.type === 'HELLO') {
    // A decoder restart: its seq starts again at 0 and its clock at 0; our time carries on from here.
    session.hello = { loops: frame.loops, firmware: frame.firmware };
    session.expectedSeq = 0;
    session.lastRawTime = null;
    session.baseUs = session.lastDecoderUs ?? 0;
    counters.frames += 1;
    counters.hellos += 1;
    return [{ kind: 'hello', version: 1, loops: frame.loops, firmware: frame.firmware }];
  }

  // Content that does not fit what HELLO announced makes the whole line bad, and a bad line is dropped
  // and counted, nothing else: checked before its seq or time can move the session's expectations.
  const misfit = misfitForHello(session, frame);
  if (misfit !== null) return [drop(session, 'range', misfit)];

  const seqBehind = session.expectedSeq === null ? 0 : (session.expectedSeq - frame.seq + SEQ_MODULO) % SEQ_MODULO;
  if (seqBehind === 1) {
    // The seq of the frame before: the same line delivered twice. Applying it again could only mislead.
    counters.duplicates += 1;
    return [];
  }

  const events: DecoderEvent[] = [];
  let restarted = advanceClock(session, frame.time);
  // seqBehind is 0 with no expectation yet, and 1 (a duplicate) has returned above.
  if (!restarted && seqBehind >= 2 && seqBehind <= SEQ_MODULO / 2) {
    // The seq went back (further than a duplicate) while the clock did not: a restart all the same.
    session.expectedSeq = null;
    counters.silentRestarts += 1;
    restarted = true;
  }
  const decoderUs = session.lastDecoderUs!;
  if (restarted) {
    // The decoder restarted and its HELLO never reached us: say so as the restart fault it is.
    events.push({ kind: 'fault', code: 'RESTART', decoderUs });
  }

  if (session.expectedSeq !== null && frame.seq !== session.expectedSeq) {
    const gap = (frame.seq - session.expectedSeq + SEQ_MODULO) % SEQ_MODULO;
    counters.lost += gap;
    events.push({ kind: 'lost', count: gap, decoderUs });
  }
  session.expectedSeq = (frame.seq + 1) % SEQ_MODULO;
  counters.frames += 1;
  switch (frame.type) {
    case 'EDGE':
      events.push({ kind: 'edge', input: frame.loop, band: frame.band, decoderUs });
      break;
    case 'TICK':
      events.push({ kind: 'tick', bands: frame.bands, decoderUs });
      break;
    case 'FAULT':
      events.push({ kind: 'fault', code: frame.code, decoderUs });
      break;
  }
  return events;
}

/**
 * Why an EDGE/TICK/FAULT does not fit the loop count the last HELLO announced — or, with no HELLO in
 * this session (joined mid-stream, after a replug or a monitor restart), the inputs the config gives
 * the decoder; null when it fits or neither is known.
 */
function misfitForHello(session: DecoderSession, frame: Exclude<Frame, { type: 'HELLO' }>): string | null {
  const loops = session.hello?.loops ?? session.configuredLoops;
  if (loops === null) return null;
  const source = session.hello ? 'the decoder announced' : 'the config gives this decoder (no HELLO yet)';
  switch (frame.type) {
    case 'EDGE':
      return frame.loop > loops ? `EDGE loop ${frame.loop} is past the ${loops} loops ${source}` : null;
    case 'TICK':
      return frame.bands.length !== loops ? `TICK has ${frame.bands.length} bands but ${source} ${loops} loops` : null;
    default:
      return null;
  }
}

/**
 * Puts the session's decoder time back to `decoderUs` from the latest frame on (the site step found
 * the decoder's clock far ahead of the host's): later frames count on from there.
 */
export function rebaseDecoderClock(session: DecoderSession, decoderUs: number): DecoderSession {
  if (session.lastDecoderUs === null) return session;
  return { ...session, lastDecoderUs: decoderUs, baseUs: session.baseUs - (session.lastDecoderUs - decoderUs) };
}

/**
 * Unwraps a raw 32-bit time against the session's anchor into `lastDecoderUs`. True when the clock
 * went back further than a late frame: a restart whose HELLO was lost.
 */
function advanceClock(session: PrivateSession, raw: number): boolean {
  // Stryker disable next-line ConditionalExpression: the two are set together here and only a HELLO clears one (lastRawTime); the second test is for the type
  if (session.lastRawTime === null || session.lastDecoderUs === null) {
    const start = session.baseUs + raw;
    // Never behind what we already handed out (a HELLO re-bases on lastDecoderUs, so this holds).
    // Stryker disable next-line LogicalOperator: `null && start` is null, and Math.max(start, null) is the non-negative start all the same
    session.lastDecoderUs = Math.max(start, session.lastDecoderUs ?? start);
    session.lastRawTime = raw;
    return false;
  }
  const forward = (raw - session.lastRawTime + TIME_MODULO) % TIME_MODULO;
  if (forward < HALF_WRAP) {
    // Frames come at least every 250 ms, so a forward step under half the wrap (35 min) is real time.
    session.lastRawTime = raw;
    session.lastDecoderUs += forward;
    return false;
  }
  const back = TIME_MODULO - forward;
  if (back <= LATE_FRAME_SLACK_US) {
    // Stamped a little before the previous frame: keep time monotonic and the anchor where it was.
    session.counters.lateFrames += 1;
    return false;
  }
  // The clock started again without a HELLO: forget the seq expectation, and carry on from the last
  // time seen. Adding the new raw time as if it had elapsed would date the loops' next events up to
  // that far in the future and trip every one of them; how long the decoder was down is unknown.
  session.expectedSeq = null;
  // Stryker disable next-line ArithmeticOperator: kept consistent, never read: lastRawTime is set here, so the next read of baseUs follows a HELLO, which sets it afresh
  session.baseUs = session.lastDecoderUs - raw;
  session.lastRawTime = raw;
  session.counters.silentRestarts += 1;
  return true;
}
