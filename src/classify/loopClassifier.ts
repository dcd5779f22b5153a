import { isBand, type Band } from '../model/band.js';
import { isFaultState, type LoopState } from '../model/loopState.js';
import { copyLineQuality, type LineQuality } from './lineQuality.js';
import { copyLoopState, loopWindowsOf, type LoopClassifierState, type LoopSettings, type LoopWindows } from './loopClassifierState.js';

/*
 * The loop classifier: the state machine of one supervised loop.
 *
 * The decoder reports the loop's current band (O below the open threshold, N standby, H above the high
 * threshold) as EDGE frames when it changes and as TICK frames that restate every loop's band. A node
 * that is well pulls its loop from N to H for about a millisecond every period; it stops when its
 * reading crosses the threshold. This file turns those frames into the loop's state, dated in decoder
 * time at the instant a window ran out, whatever frame revealed it.
 *
 * States (src/model/loopState.ts), with the defaults of DEFAULT_LOOP_SETTINGS:
 *
 *   state     entered when                                          dated at
 *   --------  ----------------------------------------------------  ----------------------------------
 *   unknown   start; decoder restart (HELLO); heard after offline   the last decoder time heard
 *   healthy   healthyPulses (3) valid pulses in a row in rhythm     the end of the last of them
 *   shorted   band H held for shortMs (200 ms)                      span start + shortMs
 *   open      band O held for openMs (200 ms)                       span start + openMs
 *   tripped   band N, no valid pulse for tripMs (1500 ms)           max(trip deadline, N span start)
 *   offline   the shell says the decoder is silent or gone          the last decoder time heard
 *
 *   Any state can follow any other, except that leaving offline always goes through unknown. shorted,
 *   open and tripped are the fault states: entering one breaks the pulse chain (return to normal needs
 *   fresh pulses) and is counted for the intermittent flag.
 *
 * Windows (LoopWindows in loopClassifierState.ts, all in whole decoder µs):
 *
 *   window         runs from                                   ends, and what then
 *   -------------  ------------------------------------------  -----------------------------------------
 *   valid pulse    an EDGE N→H, no frames lost                 an EDGE H→N within pulseMin..pulseMax
 *                                                              (0.2–20 ms, both ends in): a heartbeat
 *   rhythm         the previous valid pulse's start            next pulse's start within 0.5–1.5 periods
 *   short          the H span's start                          reached (≥): shorted
 *   open           the O span's start                          reached (≥): open
 *   trip           last valid pulse / first input / end of     passed (>): tripped. A pulse starting at
 *                  an open or short / a sign of life           the deadline itself still counts.
 *   hidden pulse   a gap of lost frames that could hide one    moves the trip deadline by at most half
 *                                                              a period (hiddenPulseGraceUs)
 *   intermittent   each fault entry, kept intermittentWindow   intermittentCount (3) entries within
 *                  (10 min)                                    10 min: flag on; a whole window healthy:
 *                                                              flag off
 *
 * Inputs (LoopInput), each handled in one case of applyInput below:
 *
 *   band (EDGE)    the loop entered a band at an exact time: ends the current span (endBand) and starts
 *                  the next one; first fires every window that ran out before it (advanceLoop).
 *   sync (TICK)    the band at a time: fires windows that ran out by then; a band that differs means
 *                  EDGEs were lost, so the old span ends at an unknown time (nothing inferred from it).
 *   lost           frames lost on the decoder: widths in flight become untrusted, and a gap that could
 *                  have hidden a whole pulse at N gives the trip window the benefit of the doubt.
 *   restart        back to unknown, timing history forgotten (quality and intermittent survive).
 *   offline        offline now; the next band or sync starts over from unknown.
 *
 * Worked example, "an EDGE into H while the loop is healthy": the band case of applyInput first runs
 * advanceLoop up to the EDGE's time (a trip whose deadline passed while the line sat at N fires first,
 * dated at its deadline), then endBand ends the N span and beginSpan starts an H span that may be a
 * heartbeat (it left N by EDGE, no frames lost). Nothing changes state yet: while the band is H only the
 * short window runs (advanceLoop), so the loop turns shorted if H is still there shortMs later. The EDGE
 * back to N ends the span in endHighSpan: a heartbeat (acceptPulse restarts the trip window and counts
 * the interval), a glitch or long pulse (counted; a trip deadline that ran out during it then stands).
 *
 * Shape: stepLoop copies the caller's state once (copyLoopState; the line-quality counters only when the
 * step first changes one, see ownQuality), the private helpers below update that copy in place through
 * one LoopRun, and the copy is handed back. Effects are sorted by time at the end,
 * because a window that expired earlier than the input that revealed it is dated when it expired.
 */

// ── inputs and effects ───────────────────────────────────────────────────────────────────────────

/** Inputs to the per-loop classifier. Times are unwrapped decoder µs; the classifier never reads a clock. */
export type LoopInput =
  /** The loop entered `band` at `atUs` (an EDGE frame). */
  | { kind: 'band'; band: Band; atUs: number }
  /** A TICK: the loop's band at `atUs`; advances time and resynchronises the band after lost frames. */
  | { kind: 'sync'; band: Band; atUs: number }
  /** Frames were lost on this loop's decoder (a sequence gap or an OVERRUN fault). */
  | { kind: 'lost'; count: number; atUs: number }
  /** The decoder restarted (HELLO) or reconnected: back to `unknown`, timing history forgotten. */
  | { kind: 'restart' }
  /** The decoder went silent or its port vanished (decided by the shell on host time). */
  | { kind: 'offline' };

export type LoopEffect =
  | { kind: 'state'; from: LoopState; to: LoopState; atUs: number; reason: string }
  /** A valid heartbeat pulse; `atUs` is its start, `intervalUs` null when not measured (see LineQuality). */
  | { kind: 'pulse'; atUs: number; widthUs: number; intervalUs: number | null }
  | { kind: 'intermittent'; on: boolean; atUs: number; faultsInWindow: number };

// ── the step ─────────────────────────────────────────────────────────────────────────────────────

/**
 * One input in, the next state and what happened out. Pure: decoder time comes in with the input,
 * nothing is read from a clock, the given state is never modified. Effects come out in time order;
 * within one input they may date from before its own time, because a window that expired earlier is
 * dated when it expired.
 */
export function stepLoop(
  state: LoopClassifierState,
  input: LoopInput,
  settings: LoopSettings,
): { state: LoopClassifierState; effects: LoopEffect[] } {
  // faultEntriesUs is replaced, never mutated, and quality is copied before its first change
  // (ownQuality), so sharing either with the caller's state is safe.
  const run: LoopRun = { s: copyLoopState(state), w: loopWindowsOf(settings), effects: [], qualityOwned: false };
  applyInput(run, input);
  // Array.prototype.sort is stable, so effects dated alike keep the order they happened in. Most steps
  // give none or one, and need no sort.
  // Stryker disable next-line ConditionalExpression,EqualityOperator: sorting none or one effect changes nothing
  if (run.effects.length > 1) run.effects.sort(byTime);
  return { state: run.s, effects: run.effects };
}

/** Feeds a batch of inputs in order (replay, tests, benchmarks); the same as stepping them one by one. */
export function stepLoopAll(
  state: LoopClassifierState,
  inputs: readonly LoopInput[],
  settings: LoopSettings,
): { state: LoopClassifierState; effects: LoopEffect[] } {
  let current = state;
  const effects: LoopEffect[] = [];
  for (const input of inputs) {
    const step = stepLoop(current, input, settings);
    current = step.state;
    for (const effect of step.effects) effects.push(effect);
  }
  return { state: current, effects };
}

const byTime = (a: LoopEffect, b: LoopEffect): number => a.atUs - b.atUs;

// ── private: one step's working set ──────────────────────────────────────────────────────────────

/**
 * A private copy of the state that the helpers below update in place, the loop's windows, and the
 * effects gathered so far. The copy is what keeps stepLoop pure to its callers.
 */
interface LoopRun {
  s: LoopClassifierState;
  w: LoopWindows;
  effects: LoopEffect[];
  /** `s.quality` is this step's own copy. Most steps (a TICK on a quiet line) count nothing, so they never copy it. */
  qualityOwned: boolean;
}

/** The line-quality counters, safe to change: copied from the caller's state on the step's first change. */
function ownQuality(run: LoopRun): LineQuality {
  // Stryker disable next-line ConditionalExpression: copying an owned copy again gives the same counters; it only costs an allocation
  if (!run.qualityOwned) {
    run.s.quality = copyLineQuality(run.s.quality);
    // Stryker disable next-line BooleanLiteral: as above, a second copy holds the same counters
    run.qualityOwned = true;
  }
  return run.s.quality;
}

// ── private: the inputs, one case each ───────────────────────────────────────────────────────────

function applyInput(run: LoopRun, input: LoopInput): void {
  const s = run.s;
  switch (input.kind) {
    case 'restart':
      startOver(run, s.lastHeardUs ?? 0, stateReason.restarted());
      return;
    case 'offline':
      s.awaitingSpeech = true;
      enterState(run, 'offline', s.lastHeardUs ?? 0, stateReason.offline());
      return;
    case 'lost': {
      const count = Number.isFinite(input.count) ? Math.max(0, Math.floor(input.count)) : 0;
      if (count === 0) return;
      ownQuality(run).lostFrames += count;
      s.spanTimed = false;
      // Stryker disable next-line BooleanLiteral: read only together with spanTimed, cleared on the line above
      s.highMayBePulse = false;
      s.lostSinceSeen = true;
      // The count is the decoder's: the frames may as well have been other loops'. One frame cannot hide
      // a whole pulse of this loop while it sits at N, and if it was one of this loop's EDGEs the next
      // frame for the loop shows it (an EDGE into the band tracked, or a TICK with another band), which
      // breaks the chain then. Two frames can hide a whole pulse: the interval across them is untrusted,
      // and the trip window gets the benefit of the doubt.
      const mayHidePulse = count >= 2 && s.band === 'N';
      if (mayHidePulse || s.band !== 'N') breakRhythm(run);
      // Stryker disable next-line ConditionalExpression: with nowUs null nothing was heard since a start, so there is no trip window and noteHiddenPulse does nothing
      if (mayHidePulse && s.nowUs !== null) noteHiddenPulse(run, s.nowUs, Math.max(s.nowUs, input.atUs) - run.w.pulseMinUs);
      return;
    }
    case 'band':
    case 'sync': {
      // The shell validates frames; this only keeps a malformed value from corrupting the state.
      if (!Number.isFinite(input.atUs) || !isBand(input.band)) return;
      if (s.awaitingSpeech) startOver(run, input.atUs, stateReason.heardAgain());
      // Decoder time never runs backwards within a session; a late value is taken as "now".
      const atUs = s.nowUs === null ? input.atUs : Math.max(input.atUs, s.nowUs);
      s.lastHeardUs = atUs;
      if (s.tripFromUs === null) s.tripFromUs = atUs;
      if (input.band !== s.band) {
        const viaEdge = input.kind === 'band';
        // An EDGE vouches that the old band held until now; a TICK after lost frames does not, and nor
        // does an EDGE out of H or O after lost frames: the EDGE that ended that span may have been among
        // them, so a short or open must not be dated inside a span nobody saw. (At N, lost frames can hide
        // only whole pulses, which the trip deadline already allows for.)
        if (viaEdge && (s.band === 'N' || !s.lostSinceSeen)) advanceLoop(run, atUs);
        endBand(run, atUs, input.band, viaEdge);
      } else if (s.lostSinceSeen) {
        // The same band after a gap need not mean it held (see endMissedSpan). Without a gap it did, and
        // an EDGE into the band tracked is the decoder contradicting itself: it then changes nothing.
        endMissedSpan(run, atUs, input.kind === 'band');
      }
      s.lostSinceSeen = false;
      s.nowUs = atUs;
      advanceLoop(run, atUs);
      return;
    }
    // Stryker disable next-line ConditionalExpression,BlockStatement: unreachable, every input kind has its case (the never check)
    default: {
      const unexpected: never = input;
      void unexpected;
    }
  }
}

/** Back to unknown with the loop's timing history forgotten; quality counters and the intermittent flag survive. */
function startOver(run: LoopRun, atUs: number, reason: string): void {
  const s = run.s;
  s.nowUs = null;
  s.band = null;
  s.bandSinceUs = null;
  // Stryker disable next-line BooleanLiteral: band is null now, and the first band input begins a span, which sets all three span flags before any is read
  s.highMayBePulse = false;
  // Stryker disable next-line BooleanLiteral: as above
  s.spanTimed = false;
  // Stryker disable next-line BooleanLiteral: as above
  s.spanStartKnown = false;
  s.spanFrom = null;
  s.tripFromUs = null;
  s.hiddenPulseUs = null;
  // Stryker disable next-line BooleanLiteral: read only once a band is known, and the first band input clears it
  s.lostSinceSeen = false;
  s.lastPulseUs = null;
  // Stryker disable next-line ArrayDeclaration: a non-number entry fails the window filter at the next fault entry
  s.faultEntriesUs = [];
  s.awaitingSpeech = false;
  breakRhythm(run);
  enterState(run, 'unknown', atUs, reason);
}

// ── private: time passing within a span ──────────────────────────────────────────────────────────

/**
 * Fires every window that expires by `toUs` while the band stays as it is, each at its exact expiry
 * time, so a state is dated when its window ran out rather than when a later frame revealed it.
 *
 * While the band is H only the short window runs: whether the span is a heartbeat (which would cancel
 * a trip) is known only when it ends, so a trip or an intermittent clear falling inside it waits for
 * endBand, which dates it exactly all the same.
 *
 * Open fires once `toUs` reaches its window's end (held for 200 ms, that instant included); a trip only
 * once `toUs` is past its deadline, because a pulse starting at the deadline itself still counts (see
 * tripDeadlineUs).
 */
function advanceLoop(run: LoopRun, toUs: number): void {
  const { s, w } = run;
  // Each pass changes the state or the flag, so a few passes always settle; the bound guards odd settings.
  // Stryker disable next-line EqualityOperator,UpdateOperator: every pass returns or changes the state or flag, so the bound is never reached
  for (let pass = 0; pass < 6; pass++) {
    // Stryker disable next-line ConditionalExpression,LogicalOperator: band and bandSinceUs are set and cleared together; with no band no window below can fire (no open, no trip, and no intermittent clear outside healthy)
    if (s.band === null || s.bandSinceUs === null) return;

    if (s.band === 'H') {
      // Stryker disable next-line ConditionalExpression,StringLiteral: entering shorted again changes nothing, and no intermittent clear falls due outside healthy
      if (s.state === 'shorted') return;
      const shortAtUs = s.bandSinceUs + w.shortUs;
      if (shortAtUs > toUs) return;
      clearIntermittentBy(run, shortAtUs);
      enterState(run, 'shorted', shortAtUs, stateReason.shorted(w.shortUs));
      continue;
    }

    let faultAtUs: number | null = null;
    // Stryker disable next-line ConditionalExpression,LogicalOperator,StringLiteral: at N the trip deadline replaces this value below; in open, entering open again changes nothing; an intermittent clear needs healthy, which is neither
    if (s.band === 'O' && s.state !== 'open') faultAtUs = s.bandSinceUs + w.openUs;
    // Stryker disable next-line StringLiteral: a tripped loop entering tripped again changes nothing
    const deadlineUs = s.band === 'N' && s.state !== 'tripped' ? tripDeadlineUs(run) : null;
    // A window that ran out while the band was O only trips once the band is N again.
    if (deadlineUs !== null) faultAtUs = Math.max(deadlineUs, s.bandSinceUs);
    const clearsAtUs = intermittentClearsAtUs(run);

    if (clearsAtUs !== null && clearsAtUs <= toUs && (faultAtUs === null || clearsAtUs <= faultAtUs)) {
      clearIntermittentBy(run, clearsAtUs);
      continue;
    }
    if (faultAtUs === null) return;
    const due = s.band === 'O' ? faultAtUs <= toUs : faultAtUs < toUs;
    if (!due) return;
    if (s.band === 'O') enterState(run, 'open', faultAtUs, stateReason.open(w.openUs));
    else enterState(run, 'tripped', faultAtUs, stateReason.tripped(w.tripUs));
  }
}

/**
 * The instant the loop's trip window runs out: `tripUs` after the trip window's start, moved on by a
 * pulse that lost frames may have hidden, but by at most `hiddenPulseGraceUs` (half a period) — so
 * however many frames are lost, a node that really stopped is tripped at most half a period later than
 * on a clean line (dated so; it is known once the next frame for the loop arrives). Null before the
 * first input.
 *
 * The boundary is deliberate: the node has the whole window, its last instant included. A valid pulse
 * that starts exactly at the deadline keeps the loop alive (3 periods after the last pulse is the very
 * moment the third-next pulse is due), so a trip is only confirmed once decoder time is known to be past
 * the deadline — and it is still dated at the deadline, when the window ran out.
 */
function tripDeadlineUs(run: LoopRun): number | null {
  const { s, w } = run;
  // Stryker disable next-line ConditionalExpression: every caller runs with a band known, and the first band input sets the trip window's start
  if (s.tripFromUs === null) return null;
  // Stryker disable next-line ConditionalExpression: with no hidden pulse, max(0, null − start) is 0 all the same
  const hiddenExtraUs = s.hiddenPulseUs === null ? 0 : Math.min(Math.max(0, s.hiddenPulseUs - s.tripFromUs), w.hiddenPulseGraceUs);
  return s.tripFromUs + hiddenExtraUs + w.tripUs;
}

// ── private: spans ending and beginning ──────────────────────────────────────────────────────────

/** A new span of `band` from `atUs`. `from` is the band the line left, when it was seen; `byEdge` says `atUs` is the span's exact start. */
function beginSpan(run: LoopRun, atUs: number, band: Band, from: Band | null, byEdge: boolean): void {
  const s = run.s;
  s.band = band;
  s.bandSinceUs = atUs;
  s.spanTimed = byEdge;
  s.spanStartKnown = byEdge;
  s.spanFrom = from;
  s.highMayBePulse = byEdge && band === 'H' && from === 'N';
}

/**
 * The band changes to `next` at `atUs`. `viaEdge` says an EDGE reported the change at that instant;
 * otherwise a TICK revealed it after lost frames, so the old band ended at some unknown time and
 * nothing about that span's width may be inferred beyond the bounds the frames give.
 */
function endBand(run: LoopRun, atUs: number, next: Band, viaEdge: boolean): void {
  const s = run.s;
  const previous = s.band;
  if (previous === 'H') endHighSpan(run, atUs, next, viaEdge);
  // A node that has just got its loop back (cable repaired, short cleared) gets a full trip window to
  // start pulsing, so a repair is not reported as a trip.
  if ((s.state === 'open' && previous === 'O') || (s.state === 'shorted' && previous === 'H')) s.tripFromUs = atUs;
  beginSpan(run, atUs, next, viaEdge ? previous : null, viaEdge);
  if (!viaEdge) breakRhythm(run);
}

/**
 * The H span that began at `bandSinceUs` is over at `endUs`, the line now at `next` (or, from
 * endMissedSpan, back at N at some unseen moment before it). `viaEdge` says an EDGE showed the end at
 * that instant. Books the heartbeat, glitch or long pulse it was, a sign of life if lost frames hid too
 * much to tell, and a trip whose window ran out during it.
 */
function endHighSpan(run: LoopRun, endUs: number, next: Band, viaEdge: boolean): void {
  const { s, w } = run;
  const startUs = s.bandSinceUs ?? endUs;
  // The span already proved to be a short (advanceLoop fired it); nothing more to book.
  if (s.state === 'shorted' && s.sinceUs !== null && s.sinceUs >= startUs) return;

  const widthUs = endUs - startUs;
  // Both ends seen by EDGE, no frames lost, and the band before it known: the span is judged as it is.
  const wholeSpanSeen = viaEdge && s.spanTimed && s.spanFrom !== null;
  const isHeartbeat =
    wholeSpanSeen && s.highMayBePulse && next === 'N' && widthUs >= w.pulseMinUs && widthUs <= w.pulseMaxUs;
  if (isHeartbeat) {
    clearIntermittentBy(run, endUs);
    acceptPulse(run, startUs, endUs);
    return;
  }
  if (wholeSpanSeen) {
    // Not a heartbeat. Spans too short for a long pulse count as glitches, including heartbeat-width
    // spans that did not start and end in N (noise riding an open or shorted line).
    if (widthUs > w.pulseMaxUs) ownQuality(run).longPulses += 1;
    else ownQuality(run).glitches += 1;
  } else if (next === 'N') {
    judgeHiddenHigh(run, startUs, endUs, viaEdge);
  }
  // A trip window that ran out during the span stands, dated when it ran out: invalid pulses do not
  // keep a loop alive. A deadline at the span's very end is left to advanceLoop, which fires it once
  // time is past it.
  // Stryker disable next-line ConditionalExpression,StringLiteral: a tripped loop entering tripped again changes nothing, and the intermittent clear skipped then needs healthy
  const deadlineUs = s.state !== 'tripped' ? tripDeadlineUs(run) : null;
  // Stryker disable next-line ConditionalExpression: the deadline is null only for a tripped loop (the trip window has a start once a band is known)
  if (deadlineUs !== null) {
    const tripAtUs = Math.max(deadlineUs, startUs);
    if (tripAtUs < endUs) {
      clearIntermittentBy(run, tripAtUs);
      enterState(run, 'tripped', tripAtUs, stateReason.tripped(w.tripUs));
      return;
    }
  }
  clearIntermittentBy(run, endUs);
}

/**
 * An H span back at N that lost frames hid part of, so it cannot be judged as a heartbeat. Two things
 * may still show the node alive:
 * - An EDGE into N after lost frames: the span may have ended unseen and a later pulse (its H EDGE
 *   lost) ended here — or a fault came and went, and a loop back from a fault gets a full trip window
 *   anyway. Either way the window restarts, from the latest start a valid pulse ending here could have
 *   had (as in endMissedSpan).
 * - A start seen as an EDGE out of N (or out of a band we missed, not O), with the width known only
 *   within bounds — at least until H was last seen, at most until N was seen again: unless the bounds
 *   rule out a valid pulse, the node pulled the line at `startUs`. The upper bound is not held against
 *   it: with the TICKs in between lost it is loose, and the span might be a short that came and went
 *   unseen; but the window it restarts runs from a time really seen.
 * Neither is a valid pulse (no count towards return to normal, no interval). A node that has really
 * stopped makes no EDGEs at all, so neither can keep it from tripping.
 */
function judgeHiddenHigh(run: LoopRun, startUs: number, endUs: number, viaEdge: boolean): void {
  const { s, w } = run;
  // Since H was last seen (s.nowUs) the line may have gone to N and pulsed again.
  if (viaEdge && !s.spanTimed) acceptSignOfLife(run, s.nowUs ?? startUs, endUs - w.pulseMinUs);
  if (!s.spanStartKnown || s.spanFrom === 'O') return;
  const atMostUs = endUs - startUs;
  const atLeastUs = (viaEdge && s.spanTimed ? endUs : (s.nowUs ?? startUs)) - startUs;
  if (atLeastUs > w.pulseMaxUs || atMostUs < w.pulseMinUs) return;
  acceptSignOfLife(run, startUs, startUs);
}

/**
 * A frame after lost frames shows the band already tracked, though the band may not have held: an EDGE
 * into it says an EDGE out of it was lost; a TICK at H says nothing for sure, but if H had been seen
 * only for a heartbeat's width the span may have been a pulse that ended unseen, and this H another
 * one. Then the old span ends unseen and a new one starts at `atUs` (exactly, if `viaEdge`; the band
 * before it unknown), and the pulse chain breaks; otherwise (N or O on a TICK, or H held longer) the
 * span goes on as it was.
 */
function endMissedSpan(run: LoopRun, atUs: number, viaEdge: boolean): void {
  const { s, w } = run;
  const band = s.band;
  // Stryker disable next-line ConditionalExpression,LogicalOperator: called only for the band already tracked, so there is one, with its start
  if (band === null || s.bandSinceUs === null) return;
  const mayHaveBeenPulse = band === 'H' && s.nowUs !== null && s.nowUs - s.bandSinceUs <= w.pulseMaxUs;
  if (!viaEdge && !mayHaveBeenPulse) return;
  if (band === 'H') {
    // The line must have left H and come back (through N, unless something odd happened).
    endHighSpan(run, atUs, 'N', false);
  } else if (band === 'N' && s.nowUs !== null) {
    // The line left N after it was last seen there and is back by `atUs`. Either the node pulled it (a
    // pulse whose width is unknown) or a fault came and went unseen, and a loop back from a fault gets a
    // full trip window anyway (see endBand): either way the window restarts, from the latest start a
    // valid pulse ending at `atUs` could have had. Too short to hold a valid pulse: a glitch, nothing more.
    acceptSignOfLife(run, s.nowUs, atUs - w.pulseMinUs);
  }
  beginSpan(run, atUs, band, null, viaEdge);
  breakRhythm(run);
}

// ── private: pulses and signs of life ────────────────────────────────────────────────────────────

/**
 * Books one valid heartbeat pulse that started at `startUs` and ended at `endUs`. Intervals run pulse
 * start to pulse start. Every trusted interval feeds the mean and jitter; those outside tolerance are
 * also counted, and restart the return-to-normal count rather than leaving healthy (the trip window
 * alone decides that, so one lost pulse never drops a healthy loop).
 */
function acceptPulse(run: LoopRun, startUs: number, endUs: number): void {
  const { s, w } = run;
  const q = ownQuality(run);
  const intervalUs = s.previousPulseUs === null ? null : startUs - s.previousPulseUs;
  q.pulses += 1;
  // Stryker disable next-line BooleanLiteral: with no interval the chain was broken (or never began), so the count is 0 and either way the pulse counts 1
  let inRhythm = false;
  if (intervalUs !== null) {
    const intervalMs = intervalUs / 1000;
    q.intervalCount += 1;
    q.intervalSumMs += intervalMs;
    q.intervalSqSumMs += intervalMs * intervalMs;
    inRhythm = intervalUs >= w.intervalMinUs && intervalUs <= w.intervalMaxUs;
    if (!inRhythm) q.outOfTolerance += 1;
  }
  s.pulsesInRhythm = inRhythm ? s.pulsesInRhythm + 1 : 1;
  s.previousPulseUs = startUs;
  s.lastPulseUs = startUs;
  s.tripFromUs = s.tripFromUs === null ? startUs : Math.max(s.tripFromUs, startUs);
  run.effects.push({ kind: 'pulse', atUs: startUs, widthUs: endUs - startUs, intervalUs });
  // Stryker disable next-line ConditionalExpression,StringLiteral: entering healthy again changes nothing
  if (s.state !== 'healthy' && s.pulsesInRhythm >= w.healthyPulses) {
    enterState(run, 'healthy', endUs, stateReason.healthy(s.pulsesInRhythm));
  }
}

/**
 * The node was seen pulling the line — some EDGE of it came through — but lost frames hid part of the
 * pulse, so it could not be checked as a valid heartbeat. A pulse it stands for started somewhere in
 * [`earliestUs`, `latestUs`]. That proves the node alive, so the trip window restarts from `latestUs`;
 * unless the window had already run out before `earliestUs`, in which case the trip stands (the caller
 * fires it, dated at the deadline). It is no valid pulse: it neither counts towards return to normal
 * nor gives an interval, and `lastPulseUs` stays with the last valid one.
 */
function acceptSignOfLife(run: LoopRun, earliestUs: number, latestUs: number): void {
  const s = run.s;
  if (latestUs < earliestUs) return;
  const deadlineUs = s.state === 'tripped' ? null : tripDeadlineUs(run);
  if (deadlineUs !== null && deadlineUs < earliestUs) return;
  s.tripFromUs = s.tripFromUs === null ? latestUs : Math.max(s.tripFromUs, latestUs);
}

/**
 * Lost frames may have hidden a valid pulse that started at some time in [`fromUs`, `toUs`] (both its
 * EDGEs lost, or one EDGE lost and the other not telling enough). Nothing proves it, so the loop gets
 * only the benefit of the doubt: the trip window may run from the latest start such a pulse could have
 * had and still have kept the loop alive — never past the current deadline (a pulse after it would not
 * have stopped the trip) and never more than half a period past what was really seen (tripDeadlineUs caps it).
 */
function noteHiddenPulse(run: LoopRun, fromUs: number, toUs: number): void {
  const s = run.s;
  // Stryker disable next-line ConditionalExpression,StringLiteral: a tripped loop's hidden pulse is before its deadline, so once a pulse restarts the window it adds nothing
  if (s.state === 'tripped') return;
  const deadlineUs = tripDeadlineUs(run);
  // Stryker disable next-line ConditionalExpression: called only with a band known, so the trip window has a start
  if (deadlineUs === null) return;
  const latestStartUs = Math.min(toUs, deadlineUs);
  // Only pulses after the deadline fit (the trip is certain), or no room at all.
  if (latestStartUs < fromUs) return;
  s.hiddenPulseUs = s.hiddenPulseUs === null ? latestStartUs : Math.max(s.hiddenPulseUs, latestStartUs);
}

// ── private: entering a state, and the intermittent flag ─────────────────────────────────────────

/** Forget interval history: the next pulse starts a new chain and reports no interval. */
function breakRhythm(run: LoopRun): void {
  run.s.previousPulseUs = null;
  run.s.pulsesInRhythm = 0;
}

function enterState(run: LoopRun, to: LoopState, atUs: number, reason: string): void {
  const s = run.s;
  if (s.state === to) return;
  run.effects.push({ kind: 'state', from: s.state, to, atUs, reason });
  s.state = to;
  s.sinceUs = atUs;
  if (!isFaultState(to)) return;
  // Return to normal must be earned with fresh pulses, never with a chain begun before the fault.
  breakRhythm(run);
  const windowStart = atUs - run.w.intermittentWindowUs;
  s.faultEntriesUs = [...s.faultEntriesUs.filter((t) => t >= windowStart), atUs];
  if (!s.intermittent && s.faultEntriesUs.length >= run.w.intermittentCount) {
    s.intermittent = true;
    run.effects.push({ kind: 'intermittent', on: true, atUs, faultsInWindow: s.faultEntriesUs.length });
  }
}

/** When the intermittent flag may drop: a whole window spent healthy (no fault entry can fall inside it). */
function intermittentClearsAtUs(run: LoopRun): number | null {
  const s = run.s;
  // Stryker disable next-line ConditionalExpression: a healthy loop has a sinceUs (entering healthy sets it); the test is for the type
  if (!s.intermittent || s.state !== 'healthy' || s.sinceUs === null) return null;
  return s.sinceUs + run.w.intermittentWindowUs;
}

/** Drop the intermittent flag if its time has come by `limitUs`. */
function clearIntermittentBy(run: LoopRun, limitUs: number): void {
  const clearsAt = intermittentClearsAtUs(run);
  if (clearsAt === null || clearsAt > limitUs) return;
  const s = run.s;
  s.intermittent = false;
  // Stryker disable next-line ArithmeticOperator: the window start is healthy since, and every fault entry is before it (a fault ends healthy), so all go either way
  const windowStart = clearsAt - run.w.intermittentWindowUs;
  // Stryker disable next-line ArrowFunction,EqualityOperator: as above, no entry is at or after the window start
  s.faultEntriesUs = s.faultEntriesUs.filter((t) => t >= windowStart);
  run.effects.push({ kind: 'intermittent', on: false, atUs: clearsAt, faultsInWindow: s.faultEntriesUs.length });
}

// ── private: the words of a state change ─────────────────────────────────────────────────────────

/** Short plain reasons for state changes, for the log, the store and the people reading them. */
const stateReason = {
  healthy: (pulses: number) => `${pulses} valid heartbeat pulse${pulses === 1 ? '' : 's'} in a row at the expected interval`,
  tripped: (tripUs: number) => `no valid pulse for ${formatMs(tripUs / 1000)} ms`,
  open: (openUs: number) => `loop current below the open threshold for ${formatMs(openUs / 1000)} ms`,
  shorted: (shortUs: number) => `loop current above the high threshold for ${formatMs(shortUs / 1000)} ms`,
  restarted: () => 'decoder restarted: classification starts over',
  heardAgain: () => 'decoder heard again after being offline: classification starts over',
  offline: () => 'decoder silent or its port is gone',
} as const;

/** Milliseconds without float noise: 1089.0000000000002 → "1089", 0.25 → "0.25". */
function formatMs(ms: number): string {
  return String(Math.round(ms * 1000) / 1000);
}
