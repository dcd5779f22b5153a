import type { LoopConfig } from '../config/schema.js';
import type { Band } from '../model/band.js';
import type { LoopState } from '../model/loopState.js';
import { emptyLineQuality, type LineQuality } from './lineQuality.js';

/**
 * What the classifier of one loop remembers, and what it is told.
 *
 * LoopClassifierState is everything one loop's classifier carries from one input to the next, as plain
 * serialisable data (times in unwrapped decoder µs). Outside src/classify it is opaque: read it through
 * the accessors below. LoopSettings are the loop's configured windows in milliseconds, as the config
 * gives them; LoopWindows are the same converted once into whole decoder microseconds, the unit every
 * comparison in the state machine (loopClassifier.ts) is made in.
 */

// ── state ────────────────────────────────────────────────────────────────────────────────────────

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
   * sign of life seen through lost frames (see acceptSignOfLife in loopClassifier.ts).
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
 * added to the interface and forgotten here is a compile error, since none is optional. `quality` is
 * shared, not copied: the step copies it before it first changes a counter (ownQuality in
 * loopClassifier.ts), which most TICKs never do.
 */
export function copyLoopState(s: LoopClassifierState): LoopClassifierState {
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
    quality: s.quality,
  };
}

// ── settings ─────────────────────────────────────────────────────────────────────────────────────

/** Classifier settings for one loop, all in milliseconds. */
export interface LoopSettings {
  periodMs: number;
  pulseMinMs: number;
  pulseMaxMs: number;
  shortMs: number;
  openMs: number;
  tripMs: number;
  healthyPulses: number;
  intervalMinRatio: number;
  intervalMaxRatio: number;
  intermittentCount: number;
  intermittentWindowMs: number;
}

export const DEFAULT_LOOP_SETTINGS: LoopSettings = {
  periodMs: 500,
  pulseMinMs: 0.2,
  pulseMaxMs: 20,
  shortMs: 200,
  openMs: 200,
  tripMs: 1500,
  healthyPulses: 3,
  intervalMinRatio: 0.5,
  intervalMaxRatio: 1.5,
  intermittentCount: 3,
  intermittentWindowMs: 600_000,
};

export function loopSettingsFromConfig(loop: Pick<LoopConfig,
  'period_ms' | 'pulse_min_ms' | 'pulse_max_ms' | 'short_ms' | 'open_ms' | 'trip_ms' | 'healthy_pulses' |
  'interval_min_ratio' | 'interval_max_ratio' | 'intermittent_count' | 'intermittent_window'>): LoopSettings {
  return {
    periodMs: loop.period_ms,
    pulseMinMs: loop.pulse_min_ms,
    pulseMaxMs: loop.pulse_max_ms,
    shortMs: loop.short_ms,
    openMs: loop.open_ms,
    tripMs: loop.trip_ms ?? loop.period_ms * 3,
    healthyPulses: loop.healthy_pulses,
    intervalMinRatio: loop.interval_min_ratio,
    intervalMaxRatio: loop.interval_max_ratio,
    intermittentCount: loop.intermittent_count,
    intermittentWindowMs: loop.intermittent_window,
  };
}

// ── windows: the settings in decoder µs ──────────────────────────────────────────────────────────

/**
 * A loop's settings converted once into whole decoder microseconds. Rounding to 1 µs matches the
 * decoder's own timestamp resolution, so a window expires on a time the decoder could actually have
 * reported.
 */
export interface LoopWindows {
  pulseMinUs: number;
  pulseMaxUs: number;
  shortUs: number;
  openUs: number;
  tripUs: number;
  /**
   * How far a pulse that lost frames may have hidden can push a trip past the last sign of life really
   * seen: half a period (250 ms at the default 500 ms). In fault simulations at 10 % garbled lines it
   * removed nearly all false trips; more bought little and only delayed real trips further.
   */
  hiddenPulseGraceUs: number;
  intervalMinUs: number;
  intervalMaxUs: number;
  healthyPulses: number;
  intermittentCount: number;
  intermittentWindowUs: number;
}

/**
 * The windows of one settings object, worked out on its first use and kept: a TICK steps every loop,
 * and converting the settings anew each time was an allocation per loop per frame. Settings are
 * treated as immutable (they come from the config once), so the cache key is the object itself.
 */
export function loopWindowsOf(settings: LoopSettings): LoopWindows {
  let w = windowsCache.get(settings);
  // Stryker disable next-line ConditionalExpression: working the windows out again gives the same windows; the cache only saves the work
  if (w === undefined) {
    w = toWindows(settings);
    windowsCache.set(settings, w);
  }
  return w;
}

const windowsCache = new WeakMap<LoopSettings, LoopWindows>();

const toUs = (ms: number): number => Math.round(ms * 1000);

function toWindows(settings: LoopSettings): LoopWindows {
  return {
    pulseMinUs: toUs(settings.pulseMinMs),
    pulseMaxUs: toUs(settings.pulseMaxMs),
    shortUs: toUs(settings.shortMs),
    openUs: toUs(settings.openMs),
    tripUs: toUs(settings.tripMs),
    hiddenPulseGraceUs: toUs(settings.periodMs / 2),
    intervalMinUs: toUs(settings.periodMs * settings.intervalMinRatio),
    intervalMaxUs: toUs(settings.periodMs * settings.intervalMaxRatio),
    healthyPulses: Math.max(1, Math.floor(settings.healthyPulses)),
    intermittentCount: Math.max(1, Math.floor(settings.intermittentCount)),
    intermittentWindowUs: toUs(settings.intermittentWindowMs),
  };
}
