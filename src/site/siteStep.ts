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
  const effects: SiteEffect[] = [];
  // Copy-on-write: most lines touch one loop, and an array copy is far cheaper than an object spread.
  let loops = state.loops;
  let loopsCopied = false;
  const decoders = { ...state.decoders };
  let tripHolds = state.tripHolds;
  // Allocated on the first hold of this step: most lines open none.
  let holdsOpenedNow: Set<string> | null = null;
  let believedUntil = state.massTripBelievedUntil;
  const setHold = (decoderId: string, hold: TripHold | null) => {
    const next = { ...tripHolds };
    if (hold) next[decoderId] = hold;
    else delete next[decoderId];
    tripHolds = next;
  };
  /** Held back for the mass-trip rule: a trip of a decoder with 2+ loops, and whatever a held loop does next. */
  const holdsBack = (loop: SiteLoop, effect: SiteEffect): boolean => {
    // Stryker disable next-line ConditionalExpression,BooleanLiteral: feedLoop hands only loop effects to holdsBack
    if (effect.kind !== 'loop') return false;
    const hold = tripHolds[loop.decoderId];
    if (hold?.loopIds.includes(loop.id)) {
      setHold(loop.decoderId, { ...hold, effects: [...hold.effects, effect] });
      return true;
    }
    const e = effect.effect;
    // Stryker disable next-line ConditionalExpression: a pulse or intermittent effect has no `to`, so the second test turns it away as well
    if (e.kind !== 'state' || e.to !== 'tripped') return false;
    // Stryker disable next-line ConditionalExpression,OptionalChaining: a one-loop decoder's hold opens and is released, in order, at the end of this same step (below); the loop came from that map
    if ((index.loopsByDecoder.get(loop.decoderId)?.length ?? 0) < 2) return false;
    if ((believedUntil[loop.decoderId] ?? -Infinity) > nowMs) return false;
    // Stryker disable next-line ConditionalExpression: a hold opened in an earlier step already has a loop, so with this one it is never under two and is not released early
    if (!hold) (holdsOpenedNow ??= new Set()).add(loop.decoderId);
    setHold(loop.decoderId, {
      sinceMs: hold?.sinceMs ?? nowMs,
      loopIds: [...(hold?.loopIds ?? []), loop.id],
      from: { ...hold?.from, [loop.id]: e.from },
      effects: [...(hold?.effects ?? []), effect],
    });
    return true;
  };

  const feedLoops = (decoderId: string, loopInput: (loop: SiteLoop) => LoopInput | null, placeAt: (atUs: number | undefined) => number) => {
    for (const loop of index.loopsByDecoder.get(decoderId) ?? []) {
      const li = loopInput(loop);
      if (li) feedLoop(loop, li, placeAt);
    }
  };
  const feedLoop = (loop: SiteLoop, li: LoopInput, placeAt: (atUs: number | undefined) => number) => {
    const index = loop.index!;
    const result = stepLoop(loops[index]!, li, loop.settings);
    // Stryker disable next-line ConditionalExpression: copy-on-write only saves copies; writing the same state back changes nothing
    if (result.state !== loops[index]) {
      // Stryker disable next-line ConditionalExpression: copying again gives the same loops (the state handed in is never written)
      if (!loopsCopied) {
        loops = loops.slice();
        // Stryker disable next-line BooleanLiteral: copying again gives the same loops (the state handed in is never written)
        loopsCopied = true;
      }
      (loops as LoopClassifierState[])[index] = result.state;
    }
    for (const effect of result.effects) {
      const siteEffect: SiteEffect = { kind: 'loop', loopId: loop.id, effect, atMs: placeAt('atUs' in effect ? effect.atUs : undefined) };
      if (!holdsBack(loop, siteEffect)) effects.push(siteEffect);
    }
  };
  /** The window is over: all loops tripped → one decoder trouble and the loops start over; else the trips as they were. */
  const releaseHold = (decoderId: string, hold: TripHold, asMass: boolean) => {
    setHold(decoderId, null);
    if (!asMass) {
      effects.push(...hold.effects);
      return;
    }
    effects.push({ kind: 'decoder-mass-trip', decoderId, atMs: nowMs, loops: hold.loopIds.length });
    believedUntil = { ...believedUntil, [decoderId]: nowMs + MASS_TRIP_BELIEVED_MS };
    const before = effects.length;
    feedLoops(decoderId, () => ({ kind: 'restart' }), () => nowMs);
    // The shell never heard of the held trips: restate each loop's way to `unknown` from what it did hear.
    const restated = effects.splice(before).flatMap((effect): SiteEffect[] => {
      // Stryker disable next-line ConditionalExpression,LogicalOperator,ArrayDeclaration: a restart gives only state effects (loopClassifier startOver)
      if (effect.kind !== 'loop' || effect.effect.kind !== 'state') return [effect];
      const from: LoopState = hold.from[effect.loopId] ?? effect.effect.from;
      return from === effect.effect.to ? [] : [{ ...effect, effect: { ...effect.effect, from } }];
    });
    effects.push(...restated);
  };
  const goOffline = (decoder: DecoderRuntime, reason: string): DecoderRuntime => {
    if (decoder.offline) return decoder;
    // Offline is its own trouble; trips held back until now stand as they were.
    const hold = tripHolds[decoder.id];
    if (hold) releaseHold(decoder.id, hold, false);
    effects.push({ kind: 'decoder-offline', decoderId: decoder.id, atMs: nowMs, reason });
    feedLoops(decoder.id, () => ({ kind: 'offline' }), () => nowMs);
    return { ...decoder, offline: true };
  };

  switch (input.kind) {
    case 'clock': {
      for (const decoder of Object.values(decoders)) {
        const silenceMs = index.silenceMs.get(decoder.id) ?? 2000;
        // Stryker disable next-line ConditionalExpression,LogicalOperator: goOffline leaves an offline decoder as it is, and initialSiteState sets lastValidAtMs, so it is never null here
        if (!decoder.offline && decoder.lastValidAtMs !== null && nowMs - decoder.lastValidAtMs >= silenceMs) {
          decoders[decoder.id] = goOffline(decoder, `no valid line for ${Math.round((nowMs - decoder.lastValidAtMs) / 100) / 10} s`);
        }
      }
      break;
    }
    case 'link-down': {
      const decoder = decoders[input.decoderId];
      if (decoder) decoders[input.decoderId] = goOffline(decoder, input.reason);
      break;
    }
    case 'link-up': {
      const decoder = decoders[input.decoderId];
      // A new connection is a new session: sequence and clock expectations start afresh.
      if (decoder) decoders[input.decoderId] = { ...decoder, session: initialDecoderSession(index.inputs.get(decoder.id) ?? null), latestDecoderUs: null, latestHostMs: null, hostLagMs: null };
      break;
    }
    case 'line': {
      let decoder = decoders[input.decoderId];
      if (!decoder) break;
      const stepped = stepDecoderSession(decoder.session, input.line);
      // One private copy per line, updated in place below and handed back (as stepLoop does); field by
      // field, as the session's own copy, because it is on every line.
      decoder = {
        id: decoder.id,
        session: stepped.session,
        lastValidAtMs: decoder.lastValidAtMs,
        latestDecoderUs: decoder.latestDecoderUs,
        latestHostMs: decoder.latestHostMs,
        hostLagMs: decoder.hostLagMs,
        offline: decoder.offline,
      };
      const frameUs = stepped.events.some((e) => 'decoderUs' in e) ? stepped.session.lastDecoderUs : null;
      if (frameUs !== null) {
        const lagMs = nowMs - frameUs / 1000;
        const floorMs = decoder.hostLagMs === null ? null : decoder.hostLagMs + Math.max(0, nowMs - (decoder.latestHostMs ?? nowMs)) * DECODER_CLOCK_CREEP;
        const toleranceMs = index.definition.decoderClockAheadMs ?? null;
        // Stryker disable next-line ConditionalExpression: with no floor yet the test reads lagMs < null − tolerance, i.e. below −tolerance, which a host-minus-decoder time in epoch ms never is
        if (floorMs !== null && toleranceMs !== null && lagMs < floorMs - toleranceMs) {
          // Stamped far beyond the host's time: not applied. Decoder time is put back in step with the host.
          const inStepUs = Math.round((nowMs - floorMs) * 1000);
          effects.push({ kind: 'decoder-clock', decoderId: decoder.id, atMs: nowMs, aheadMs: Math.round(floorMs - lagMs) });
          decoder = { ...decoder, session: rebaseDecoderClock(decoder.session, inStepUs), lastValidAtMs: nowMs, latestDecoderUs: inStepUs, latestHostMs: nowMs, hostLagMs: floorMs };
          if (decoder.offline) {
            decoder = { ...decoder, offline: false };
            effects.push({ kind: 'decoder-online', decoderId: decoder.id, atMs: nowMs });
          }
          feedLoops(decoder.id, () => ({ kind: 'restart' }), () => nowMs);
          decoders[input.decoderId] = decoder;
          break;
        }
        decoder.hostLagMs = floorMs === null ? lagMs : Math.min(lagMs, floorMs);
      }
      for (const event of stepped.events) {
        if (event.kind === 'dropped') {
          effects.push({ kind: 'decoder', decoderId: decoder.id, event, atMs: nowMs });
          continue;
        }
        decoder.lastValidAtMs = nowMs;
        if ('decoderUs' in event) {
          decoder.latestDecoderUs = event.decoderUs;
          decoder.latestHostMs = nowMs;
        }
        const anchorUs = decoder.latestDecoderUs;
        const placeAt = (atUs: number | undefined) =>
          // Stryker disable next-line ConditionalExpression,LogicalOperator: every loop effect has atUs, and the anchor was set from this very event's time before placeAt is used
          atUs === undefined || anchorUs === null ? nowMs : Math.round(nowMs - (anchorUs - atUs) / 1000);
        if (decoder.offline) {
          decoder.offline = false;
          effects.push({ kind: 'decoder-online', decoderId: decoder.id, atMs: nowMs });
          feedLoops(decoder.id, () => ({ kind: 'restart' }), () => nowMs);
        }
        switch (event.kind) {
          case 'hello':
            effects.push({ kind: 'decoder', decoderId: decoder.id, event, atMs: nowMs });
            feedLoops(decoder.id, () => ({ kind: 'restart' }), () => nowMs);
            break;
          case 'edge': {
            const loop = index.loopByInput.get(decoder.id)?.[event.input];
            effects.push({ kind: 'edge', decoderId: decoder.id, input: event.input, band: event.band, decoderUs: event.decoderUs, atMs: placeAt(event.decoderUs) });
            if (loop) feedLoop(loop, { kind: 'band', band: event.band, atUs: event.decoderUs }, placeAt);
            break;
          }
          case 'tick':
            feedLoops(decoder.id, (loop) => {
              const band = event.bands[loop.input - 1];
              return band ? { kind: 'sync', band, atUs: event.decoderUs } : null;
            }, placeAt);
            break;
          case 'lost':
            effects.push({ kind: 'decoder', decoderId: decoder.id, event, atMs: nowMs });
            feedLoops(decoder.id, () => ({ kind: 'lost', count: event.count, atUs: event.decoderUs }), placeAt);
            break;
          case 'fault':
            effects.push({ kind: 'decoder', decoderId: decoder.id, event, atMs: placeAt(event.decoderUs) });
            // OVERRUN: an unknown number of edges were lost — enough to have hidden a whole pulse.
            if (event.code === 'OVERRUN') feedLoops(decoder.id, () => ({ kind: 'lost', count: 2, atUs: event.decoderUs }), placeAt);
            // A restart (announced, or found from the clock or seq going back): the loops start over, as after HELLO.
            if (event.code === 'RESTART') feedLoops(decoder.id, () => ({ kind: 'restart' }), () => nowMs);
            break;
        }
      }
      decoders[input.decoderId] = decoder;
      break;
    }
  }
  for (const [decoderId, hold] of Object.entries(tripHolds)) {
    // One loop tripping on its own is what a freeze looks like: it is not delayed.
    if ((holdsOpenedNow as Set<string> | null)?.has(decoderId) && hold.loopIds.length < 2) {
      releaseHold(decoderId, hold, false);
      continue;
    }
    if (nowMs - hold.sinceMs < MASS_TRIP_WINDOW_MS) continue;
    // Stryker disable next-line OptionalChaining: a hold is only opened for a decoder that has loops in that map
    releaseHold(decoderId, hold, hold.loopIds.length === (index.loopsByDecoder.get(decoderId)?.length ?? 0));
  }
  return { state: { decoders, loops, tripHolds, massTripBelievedUntil: believedUntil }, effects };
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
