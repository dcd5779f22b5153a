import { initialLoopClassifier, stepLoop, takeQuality, type LoopClassifierState, type LoopInput } from '../classify/index.js';
import type { LoopState } from '../model/loopState.js';
import { initialDecoderSession, rebaseDecoderClock, stepDecoderSession } from '../protocol/decoderSession.js';
import type { DecoderRuntime, SiteEffect, SiteInput, SiteLoop, SiteQuality, SiteState, TripHold } from './siteTypes.js';

/**
 * The whole site as one pure step: decoder sessions and per-loop classifiers together.
 * Lines in, effects out, host time passed in. Decoder times are placed on the host clock by
 * anchoring each decoder's latest frame to the host time it arrived; classification itself runs
 * only on decoder time, so replaying stored lines faster than real time gives the same states.
 *
 * Decoder clock against host clock: each decoder's smallest host-minus-decoder time is tracked (allowed
 * to creep up by DECODER_CLOCK_CREEP of the host time elapsed, for a decoder clock that runs slow). A
 * frame stamped more than DECODER_CLOCK_AHEAD_MS ahead of that is a decoder fault: the frame is not
 * applied, decoder time is put back in step with the host, and the decoder's loops start over
 * (`unknown`) instead of tripping on time that never passed.
 *
 * Mass trips: when every loop of a decoder with two or more loops trips within MASS_TRIP_WINDOW_MS
 * (host time), that is the link, not that many freezes. Trips of two or more loops on one frame are
 * held back for that window (a single trip is never delayed); if every loop of the decoder tripped by
 * its end, they become one `decoder-mass-trip` (a decoder-fault trouble) and the loops start over. A real all-loop event trips again once the loops' trip window has passed: a mass trip within
 * MASS_TRIP_BELIEVED_MS of the last one stands as the trips it is.
 */
export interface SiteDefinition {
  loops: readonly SiteLoop[];
  /** `inputs`: what the config gives the decoder; frames must fit it until a HELLO says otherwise. */
  decoders: ReadonlyArray<{ id: string; silenceMs: number; inputs?: number | null | undefined }>;
  /**
   * Check decoder time against host time with this tolerance (the monitor passes DECODER_CLOCK_AHEAD_MS).
   * Left out, no check: a replay of stored lines faster than real time must give the same states.
   */
  decoderClockAheadMs?: number | null;
}

/** How far a frame may claim a time ahead of the host's before it is a decoder fault (stated in the README). */
export const DECODER_CLOCK_AHEAD_MS = 2000;
/** How fast the host-minus-decoder floor may rise: 1 % covers ceramic resonators (±0.5 %, common practice). */
const DECODER_CLOCK_CREEP = 0.01;
export const MASS_TRIP_WINDOW_MS = 1000;
export const MASS_TRIP_BELIEVED_MS = 5 * 60_000;

export interface SiteIndex {
  definition: SiteDefinition;
  positions: Map<string, number>;
  loopsByDecoder: Map<string, SiteLoop[]>;
  /** Per decoder, its loops by input number (an array, as the lookup is on every EDGE). */
  loopByInput: Map<string, Array<SiteLoop | undefined>>;
  silenceMs: Map<string, number>;
  inputs: Map<string, number | null>;
}

export function indexSite(definition: SiteDefinition): SiteIndex {
  const loopsByDecoder = new Map<string, SiteLoop[]>();
  const loopByInput = new Map<string, Array<SiteLoop | undefined>>();
  const positions = new Map<string, number>();
  for (const [index, defined] of definition.loops.entries()) {
    const loop = { ...defined, index };
    positions.set(loop.id, index);
    const list = loopsByDecoder.get(loop.decoderId) ?? [];
    list.push(loop);
    loopsByDecoder.set(loop.decoderId, list);
    const byInput = loopByInput.get(loop.decoderId) ?? [];
    byInput[loop.input] = loop;
    loopByInput.set(loop.decoderId, byInput);
  }
  const silenceMs = new Map(definition.decoders.map((d) => [d.id, d.silenceMs]));
  const inputs = new Map(definition.decoders.map((d) => [d.id, d.inputs ?? null]));
  return { definition, positions, loopsByDecoder, loopByInput, silenceMs, inputs };
}

export function initialSiteState(definition: SiteDefinition, nowMs: number): SiteState {
  const decoders: Record<string, DecoderRuntime> = {};
  for (const decoder of definition.decoders) {
    decoders[decoder.id] = {
      id: decoder.id,
      session: initialDecoderSession(decoder.inputs ?? null),
      // Silence is measured from start-up, so a decoder that never speaks goes offline too.
      lastValidAtMs: nowMs,
      latestDecoderUs: null,
      latestHostMs: null,
      hostLagMs: null,
      offline: false,
    };
  }
  return { decoders, loops: definition.loops.map(() => initialLoopClassifier()), tripHolds: {}, massTripBelievedUntil: {} };
}

export function stepSite(index: SiteIndex, state: SiteState, input: SiteInput, nowMs: number): { state: SiteState; effects: SiteEffect[] } {
  // Copy in, change privately, hand back (as stepLoop does): the caller's state is never written.
  // The loops are copied only when one changes (most lines touch one loop, and a TICK all of them),
  // and the helpers below are module functions over this one run rather than closures made per line.
  const run: SiteRun = {
    index,
    nowMs,
    effects: [],
    loops: state.loops,
    loopsCopied: false,
    decoders: copyDecoders(state.decoders),
    tripHolds: state.tripHolds,
    holdsOpenedNow: null,
    believedUntil: state.massTripBelievedUntil,
  };
  switch (input.kind) {
    case 'clock': {
      for (const decoder of Object.values(run.decoders)) {
        const silenceMs = index.silenceMs.get(decoder.id) ?? 2000;
        // Stryker disable next-line ConditionalExpression,LogicalOperator: goOffline leaves an offline decoder as it is, and initialSiteState sets lastValidAtMs, so it is never null here
        if (!decoder.offline && decoder.lastValidAtMs !== null && nowMs - decoder.lastValidAtMs >= silenceMs) {
          run.decoders[decoder.id] = goOffline(run, decoder, `no valid line for ${Math.round((nowMs - decoder.lastValidAtMs) / 100) / 10} s`);
        }
      }
      break;
    }
    case 'link-down': {
      const decoder = run.decoders[input.decoderId];
      if (decoder) run.decoders[input.decoderId] = goOffline(run, decoder, input.reason);
      break;
    }
    case 'link-up': {
      const decoder = run.decoders[input.decoderId];
      // A new connection is a new session: sequence and clock expectations start afresh.
      if (decoder) run.decoders[input.decoderId] = { ...decoder, session: initialDecoderSession(index.inputs.get(decoder.id) ?? null), latestDecoderUs: null, latestHostMs: null, hostLagMs: null };
      break;
    }
    case 'line': {
      const decoder = run.decoders[input.decoderId];
      if (decoder) run.decoders[input.decoderId] = applyLine(run, decoder, input.line);
      break;
    }
  }
  settleHolds(run);
  return { state: { decoders: run.decoders, loops: run.loops, tripHolds: run.tripHolds, massTripBelievedUntil: run.believedUntil }, effects: run.effects };
}

// ── private: one step's working set ──────────────────────────────────────────────────────────────

/** One step of the site: the private copies the helpers below update, and the effects so far. */
interface SiteRun {
  index: SiteIndex;
  nowMs: number;
  effects: SiteEffect[];
  /** The caller's array until a loop's state changes (loopsCopied), then this step's own copy. */
  loops: readonly LoopClassifierState[];
  loopsCopied: boolean;
  decoders: Record<string, DecoderRuntime>;
  tripHolds: Readonly<Record<string, TripHold>>;
  /** Decoders whose hold opened in this step; allocated on the first, as most lines open none. */
  holdsOpenedNow: Set<string> | null;
  believedUntil: Readonly<Record<string, number>>;
}

const RESTART: LoopInput = Object.freeze({ kind: 'restart' });
const OFFLINE: LoopInput = Object.freeze({ kind: 'offline' });

/** A copy of the decoders record: a plain loop, as a spread went through V8's slow cloning path on every line. */
function copyDecoders(decoders: Readonly<Record<string, DecoderRuntime>>): Record<string, DecoderRuntime> {
  const copy: Record<string, DecoderRuntime> = {};
  for (const id in decoders) copy[id] = decoders[id]!;
  return copy;
}

/** One decoder line: the session's events, each applied to the decoder's runtime and its loops. */
function applyLine(run: SiteRun, before: DecoderRuntime, line: string): DecoderRuntime {
  const { nowMs, effects } = run;
  const stepped = stepDecoderSession(before.session, line);
  // One private copy per line, updated in place below and handed back (as stepLoop does); field by
  // field, as the session's own copy, because it is on every line.
  const decoder: DecoderRuntime = {
    id: before.id,
    session: stepped.session,
    lastValidAtMs: before.lastValidAtMs,
    latestDecoderUs: before.latestDecoderUs,
    latestHostMs: before.latestHostMs,
    hostLagMs: before.hostLagMs,
    offline: before.offline,
  };
  const events = stepped.events;
  let framed = false;
  for (let i = 0; i < events.length; i++) if ('decoderUs' in events[i]!) framed = true;
  if (framed) {
    const frameUs = stepped.session.lastDecoderUs!;
    const lagMs = nowMs - frameUs / 1000;
    const floorMs = decoder.hostLagMs === null ? null : decoder.hostLagMs + Math.max(0, nowMs - (decoder.latestHostMs ?? nowMs)) * DECODER_CLOCK_CREEP;
    const toleranceMs = run.index.definition.decoderClockAheadMs ?? null;
    // Stryker disable next-line ConditionalExpression: with no floor yet the test reads lagMs < null − tolerance, i.e. below −tolerance, which a host-minus-decoder time in epoch ms never is
    if (floorMs !== null && toleranceMs !== null && lagMs < floorMs - toleranceMs) return refuseClockAhead(run, decoder, floorMs, lagMs);
    decoder.hostLagMs = floorMs === null ? lagMs : Math.min(lagMs, floorMs);
  }
  for (const event of events) {
    if (event.kind === 'dropped') {
      effects.push({ kind: 'decoder', decoderId: decoder.id, event, atMs: nowMs });
      continue;
    }
    decoder.lastValidAtMs = nowMs;
    if ('decoderUs' in event) {
      decoder.latestDecoderUs = event.decoderUs;
      decoder.latestHostMs = nowMs;
    }
    // Decoder times are placed on the host clock against this event's own time (see placeOnHost).
    const anchorUs = decoder.latestDecoderUs;
    if (decoder.offline) {
      decoder.offline = false;
      effects.push({ kind: 'decoder-online', decoderId: decoder.id, atMs: nowMs });
      feedLoops(run, decoder.id, RESTART, null);
    }
    switch (event.kind) {
      case 'hello':
        effects.push({ kind: 'decoder', decoderId: decoder.id, event, atMs: nowMs });
        feedLoops(run, decoder.id, RESTART, null);
        break;
      case 'edge': {
        // Stryker disable next-line OptionalChaining: every configured decoder has loops (the config refuses one without), so its entry is there
        const loop = run.index.loopByInput.get(decoder.id)?.[event.input];
        effects.push({ kind: 'edge', decoderId: decoder.id, input: event.input, band: event.band, decoderUs: event.decoderUs, atMs: placeOnHost(nowMs, anchorUs, event.decoderUs) });
        if (loop) feedLoop(run, loop, { kind: 'band', band: event.band, atUs: event.decoderUs }, anchorUs);
        break;
      }
      case 'tick':
        for (const loop of run.index.loopsByDecoder.get(decoder.id) ?? []) {
          const band = event.bands[loop.input - 1];
          // Stryker disable next-line ConditionalExpression: a TICK too short for this loop gives it no band, and the classifier ignores an input that is not a band
          if (band) feedLoop(run, loop, { kind: 'sync', band, atUs: event.decoderUs }, anchorUs);
        }
        break;
      case 'lost':
        effects.push({ kind: 'decoder', decoderId: decoder.id, event, atMs: nowMs });
        feedLoops(run, decoder.id, { kind: 'lost', count: event.count, atUs: event.decoderUs }, anchorUs);
        break;
      case 'fault':
        effects.push({ kind: 'decoder', decoderId: decoder.id, event, atMs: placeOnHost(nowMs, anchorUs, event.decoderUs) });
        // OVERRUN: an unknown number of edges were lost — enough to have hidden a whole pulse.
        if (event.code === 'OVERRUN') feedLoops(run, decoder.id, { kind: 'lost', count: 2, atUs: event.decoderUs }, anchorUs);
        // A restart (announced, or found from the clock or seq going back): the loops start over, as after HELLO.
        if (event.code === 'RESTART') feedLoops(run, decoder.id, RESTART, null);
        break;
    }
  }
  return decoder;
}

/** Stamped far beyond the host's time: not applied. Decoder time is put back in step with the host. */
function refuseClockAhead(run: SiteRun, decoder: DecoderRuntime, floorMs: number, lagMs: number): DecoderRuntime {
  const { nowMs } = run;
  const inStepUs = Math.round((nowMs - floorMs) * 1000);
  run.effects.push({ kind: 'decoder-clock', decoderId: decoder.id, atMs: nowMs, aheadMs: Math.round(floorMs - lagMs) });
  let next: DecoderRuntime = { ...decoder, session: rebaseDecoderClock(decoder.session, inStepUs), lastValidAtMs: nowMs, latestDecoderUs: inStepUs, latestHostMs: nowMs, hostLagMs: floorMs };
  if (next.offline) {
    next = { ...next, offline: false };
    run.effects.push({ kind: 'decoder-online', decoderId: next.id, atMs: nowMs });
  }
  feedLoops(run, next.id, RESTART, null);
  return next;
}

/**
 * A decoder time on the host clock: `anchorUs` (the decoder time of the frame that arrived at
 * `nowMs`) is taken to be now. No anchor (a restart or offline, which have no decoder time of their own): now itself.
 */
function placeOnHost(nowMs: number, anchorUs: number | null, atUs: number): number {
  return anchorUs === null ? nowMs : Math.round(nowMs - (anchorUs - atUs) / 1000);
}

/** The same input to every loop of the decoder; effects placed against `anchorUs` (null: at now). */
function feedLoops(run: SiteRun, decoderId: string, input: LoopInput, anchorUs: number | null): void {
  for (const loop of run.index.loopsByDecoder.get(decoderId) ?? []) feedLoop(run, loop, input, anchorUs);
}

function feedLoop(run: SiteRun, loop: SiteLoop, input: LoopInput, anchorUs: number | null): void {
  const position = loop.index!;
  const result = stepLoop(run.loops[position]!, input, loop.settings);
  // Stryker disable next-line ConditionalExpression: copy-on-write only saves copies; writing the same state back changes nothing
  if (result.state !== run.loops[position]) {
    // Stryker disable next-line ConditionalExpression: copying again gives the same loops (the state handed in is never written)
    if (!run.loopsCopied) {
      run.loops = run.loops.slice();
      // Stryker disable next-line BooleanLiteral: copying again gives the same loops (the state handed in is never written)
      run.loopsCopied = true;
    }
    (run.loops as LoopClassifierState[])[position] = result.state;
  }
  for (const effect of result.effects) {
    const siteEffect: SiteEffect = { kind: 'loop', loopId: loop.id, effect, atMs: placeOnHost(run.nowMs, anchorUs, effect.atUs) };
    if (!holdsBack(run, loop, siteEffect)) run.effects.push(siteEffect);
  }
}

// ── private: the mass-trip rule ──────────────────────────────────────────────────────────────────

function setHold(run: SiteRun, decoderId: string, hold: TripHold | null): void {
  const next = { ...run.tripHolds };
  if (hold) next[decoderId] = hold;
  else delete next[decoderId];
  run.tripHolds = next;
}

/** Held back for the mass-trip rule: a trip of a decoder with 2+ loops, and whatever a held loop does next. */
function holdsBack(run: SiteRun, loop: SiteLoop, effect: SiteEffect): boolean {
  // Stryker disable next-line ConditionalExpression,BooleanLiteral: feedLoop hands only loop effects to holdsBack
  if (effect.kind !== 'loop') return false;
  const hold = run.tripHolds[loop.decoderId];
  if (hold?.loopIds.includes(loop.id)) {
    setHold(run, loop.decoderId, { ...hold, effects: [...hold.effects, effect] });
    return true;
  }
  const e = effect.effect;
  // Stryker disable next-line ConditionalExpression: a pulse or intermittent effect has no `to`, so the second test turns it away as well
  if (e.kind !== 'state' || e.to !== 'tripped') return false;
  // Stryker disable next-line ConditionalExpression,OptionalChaining: a one-loop decoder's hold opens and is released, in order, at the end of this same step (below); the loop came from that map
  if ((run.index.loopsByDecoder.get(loop.decoderId)?.length ?? 0) < 2) return false;
  if ((run.believedUntil[loop.decoderId] ?? -Infinity) > run.nowMs) return false;
  // Stryker disable next-line ConditionalExpression: a hold opened in an earlier step already has a loop, so with this one it is never under two and is not released early
  if (!hold) (run.holdsOpenedNow ??= new Set()).add(loop.decoderId);
  setHold(run, loop.decoderId, {
    sinceMs: hold?.sinceMs ?? run.nowMs,
    loopIds: [...(hold?.loopIds ?? []), loop.id],
    from: { ...hold?.from, [loop.id]: e.from },
    effects: [...(hold?.effects ?? []), effect],
  });
  return true;
}

/** At the end of a step: each hold whose window is over is released, as one mass trip or as the trips it held. */
function settleHolds(run: SiteRun): void {
  const holds = run.tripHolds;
  for (const decoderId in holds) {
    const hold = holds[decoderId]!;
    // One loop tripping on its own is what a freeze looks like: it is not delayed.
    if (run.holdsOpenedNow?.has(decoderId) && hold.loopIds.length < 2) {
      releaseHold(run, decoderId, hold, false);
      continue;
    }
    if (run.nowMs - hold.sinceMs < MASS_TRIP_WINDOW_MS) continue;
    // Stryker disable next-line OptionalChaining: a hold is only opened for a decoder that has loops in that map
    releaseHold(run, decoderId, hold, hold.loopIds.length === (run.index.loopsByDecoder.get(decoderId)?.length ?? 0));
  }
}

/** The window is over: all loops tripped → one decoder trouble and the loops start over; else the trips as they were. */
function releaseHold(run: SiteRun, decoderId: string, hold: TripHold, asMass: boolean): void {
  const { effects, nowMs } = run;
  setHold(run, decoderId, null);
  if (!asMass) {
    effects.push(...hold.effects);
    return;
  }
  effects.push({ kind: 'decoder-mass-trip', decoderId, atMs: nowMs, loops: hold.loopIds.length });
  run.believedUntil = { ...run.believedUntil, [decoderId]: nowMs + MASS_TRIP_BELIEVED_MS };
  const before = effects.length;
  feedLoops(run, decoderId, RESTART, null);
  // The shell never heard of the held trips: restate each loop's way to `unknown` from what it did hear.
  const restated = effects.splice(before).flatMap((effect): SiteEffect[] => {
    // Stryker disable next-line ConditionalExpression,LogicalOperator,ArrayDeclaration: a restart gives only state effects (loopClassifier startOver)
    if (effect.kind !== 'loop' || effect.effect.kind !== 'state') return [effect];
    const from: LoopState = hold.from[effect.loopId] ?? effect.effect.from;
    return from === effect.effect.to ? [] : [{ ...effect, effect: { ...effect.effect, from } }];
  });
  effects.push(...restated);
}

function goOffline(run: SiteRun, decoder: DecoderRuntime, reason: string): DecoderRuntime {
  if (decoder.offline) return decoder;
  // Offline is its own trouble; trips held back until now stand as they were.
  const hold = run.tripHolds[decoder.id];
  if (hold) releaseHold(run, decoder.id, hold, false);
  run.effects.push({ kind: 'decoder-offline', decoderId: decoder.id, atMs: run.nowMs, reason });
  feedLoops(run, decoder.id, OFFLINE, null);
  return { ...decoder, offline: true };
}

/** Takes every loop's line-quality counters (once a minute) and resets them. */
export function takeSiteQuality(index: SiteIndex, state: SiteState): { state: SiteState; qualities: SiteQuality[] } {
  const qualities: SiteQuality[] = [];
  const loops = state.loops.map((loopState, i) => {
    const taken = takeQuality(loopState);
    qualities.push({ loopId: index.definition.loops[i]!.id, quality: taken.quality });
    return taken.state;
  });
  return { state: { ...state, loops }, qualities };
}
