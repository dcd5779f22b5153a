import type { Band } from '../model/band.js';
import type { LoopState } from '../model/loopState.js';
import { emptyLineQuality } from './lineQuality.js';
import type { LineQuality } from './loopTypes.js';

/**
 * Everything the classifier remembers about one loop, as plain serialisable data. Times are unwrapped
 * decoder µs. Treat it as opaque outside src/classify: read it through the accessors below.
 */
export interface LoopClassifierState {
  state: LoopState;
  /** When `state` was entered; null until the first change. */
  sinceUs: number | null;
  /** Latest decoder time applied; reset on restart because the decoder's clock restarts with it. */
  nowUs: number | null;
  /** Latest decoder time ever heard, kept across restarts to stamp restart and offline changes. */
  lastHeardUs: number | null;
  band: Band | null;
  bandSinceUs: number | null;
  /** The current H span began with an EDGE out of N and no frames were lost since: it may be a heartbeat. */
  highMayBePulse: boolean;
  /** The current H or O span's start is known from an EDGE and no frames were lost since: its width is trustworthy. */
  spanTimed: boolean;
  /** The current span began with an EDGE, so `bandSinceUs` is a real change of band; unlike spanTimed, lost frames do not clear it. */
  spanStartKnown: boolean;
  /** The band the line left when the current span began; null when that was not seen (first band, or edges were missed). */
  spanFrom: Band | null;
  /**
   * The trip window runs from here: the last valid pulse, the first input, the end of an open/short, or a
   * sign of life seen through lost frames (see acceptSignOfLife).
   */
  tripFromUs: number | null;
  /** Frames were lost since the band was last seen (by EDGE or TICK); an EDGE into the same band then means one was missed. */
  lostSinceSeen: boolean;
  /** The latest start of a pulse that lost frames may have hidden; extends the trip window, capped (see tripDeadlineUs). */
  hiddenPulseUs: number | null;
  lastPulseUs: number | null;
  /** Start of the previous valid pulse for interval measurement; null when the chain is broken. */
  previousPulseUs: number | null;
  /** Consecutive valid pulses whose intervals were in tolerance (the return-to-normal count). */
  pulsesInRhythm: number;
  /** When the loop entered a fault state, within the intermittent window. */
  faultEntriesUs: number[];
  intermittent: boolean;
  /** Set by 'offline': the next band or sync input starts over from unknown. */
  awaitingSpeech: boolean;
  quality: LineQuality;
}

export function initialLoopClassifier(): LoopClassifierState {
  return {
    state: 'unknown',
    sinceUs: null,
    nowUs: null,
    lastHeardUs: null,
    band: null,
    bandSinceUs: null,
    // Stryker disable next-line BooleanLiteral: the first band input begins a span, which sets all three span flags before any is read
    highMayBePulse: false,
    // Stryker disable next-line BooleanLiteral: as above
    spanTimed: false,
    // Stryker disable next-line BooleanLiteral: as above
    spanStartKnown: false,
    spanFrom: null,
    tripFromUs: null,
    hiddenPulseUs: null,
    // Stryker disable next-line BooleanLiteral: read only once a band is known, and the first band input clears it
    lostSinceSeen: false,
    lastPulseUs: null,
    previousPulseUs: null,
    pulsesInRhythm: 0,
    // Stryker disable next-line ArrayDeclaration: a non-number entry fails the window filter at the first fault entry
    faultEntriesUs: [],
    intermittent: false,
    // Stryker disable next-line BooleanLiteral: starting over from the initial state is the initial state
    awaitingSpeech: false,
    quality: emptyLineQuality(),
  };
}

export function currentLoopState(state: LoopClassifierState): LoopState {
  return state.state;
}

/** Start time (decoder µs) of the last valid heartbeat pulse; null since start or restart. */
export function lastPulseUs(state: LoopClassifierState): number | null {
  return state.lastPulseUs;
}

/** Decoder time the current state was entered; null while still in the initial unknown. */
export function loopStateSinceUs(state: LoopClassifierState): number | null {
  return state.sinceUs;
}

export function isIntermittent(state: LoopClassifierState): boolean {
  return state.intermittent;
}

/**
 * A field-by-field copy for one step to work on. Written out rather than spread: the literal keeps one
 * object shape for V8, and copying is the classifier's hottest line (every loop, every TICK). A field
 * added to the interface and forgotten here is a compile error, since none is optional.
 */
export function copyLoopState(s: LoopClassifierState): LoopClassifierState {
  const q = s.quality;
  return {
    state: s.state,
    sinceUs: s.sinceUs,
    nowUs: s.nowUs,
    lastHeardUs: s.lastHeardUs,
    band: s.band,
    bandSinceUs: s.bandSinceUs,
    highMayBePulse: s.highMayBePulse,
    spanTimed: s.spanTimed,
    spanStartKnown: s.spanStartKnown,
    spanFrom: s.spanFrom,
    tripFromUs: s.tripFromUs,
    lostSinceSeen: s.lostSinceSeen,
    hiddenPulseUs: s.hiddenPulseUs,
    lastPulseUs: s.lastPulseUs,
    previousPulseUs: s.previousPulseUs,
    pulsesInRhythm: s.pulsesInRhythm,
    faultEntriesUs: s.faultEntriesUs,
    intermittent: s.intermittent,
    awaitingSpeech: s.awaitingSpeech,
    quality: {
      pulses: q.pulses,
      intervalCount: q.intervalCount,
      intervalSumMs: q.intervalSumMs,
      intervalSqSumMs: q.intervalSqSumMs,
      outOfTolerance: q.outOfTolerance,
      glitches: q.glitches,
      longPulses: q.longPulses,
      lostFrames: q.lostFrames,
    },
  };
}
