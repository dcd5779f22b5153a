import { initialLoopClassifier, stepLoop, takeQuality, type LoopClassifierState } from '../classify/index.js';
import type { LoopInput } from '../classify/loopTypes.js';
import { initialDecoderSession, stepDecoderSession } from '../protocol/decoderSession.js';
import type { DecoderRuntime, SiteEffect, SiteInput, SiteLoop, SiteQuality, SiteState } from './siteTypes.js';

/**
 * The whole site as one pure step: decoder sessions and per-loop classifiers together.
 * Lines in, effects out, host time passed in. Decoder times are placed on the host clock by
 * anchoring each decoder's latest frame to the host time it arrived; classification itself runs
 * only on decoder time, so replaying stored lines faster than real time gives the same states.
 */
export interface SiteDefinition {
  loops: readonly SiteLoop[];
  decoders: ReadonlyArray<{ id: string; silenceMs: number }>;
}

export interface SiteIndex {
  definition: SiteDefinition;
  positions: Map<string, number>;
  loopsByDecoder: Map<string, SiteLoop[]>;
  loopByInput: Map<string, SiteLoop>;
  silenceMs: Map<string, number>;
}

export function indexSite(definition: SiteDefinition): SiteIndex {
  const loopsByDecoder = new Map<string, SiteLoop[]>();
  const loopByInput = new Map<string, SiteLoop>();
  const positions = new Map<string, number>();
  for (const [index, defined] of definition.loops.entries()) {
    const loop = { ...defined, index };
    positions.set(loop.id, index);
    const list = loopsByDecoder.get(loop.decoderId) ?? [];
    list.push(loop);
    loopsByDecoder.set(loop.decoderId, list);
    loopByInput.set(`${loop.decoderId}#${loop.input}`, loop);
  }
  const silenceMs = new Map(definition.decoders.map((d) => [d.id, d.silenceMs]));
  return { definition, positions, loopsByDecoder, loopByInput, silenceMs };
}

export function initialSiteState(definition: SiteDefinition, nowMs: number): SiteState {
  const decoders: Record<string, DecoderRuntime> = {};
  for (const decoder of definition.decoders) {
    decoders[decoder.id] = {
      id: decoder.id,
      session: initialDecoderSession(),
      // Silence is measured from start-up, so a decoder that never speaks goes offline too.
      lastValidAtMs: nowMs,
      latestDecoderUs: null,
      latestHostMs: null,
      offline: false,
    };
  }
  return { decoders, loops: definition.loops.map(() => initialLoopClassifier()) };
}

export function stepSite(index: SiteIndex, state: SiteState, input: SiteInput, nowMs: number): { state: SiteState; effects: SiteEffect[] } {
  const effects: SiteEffect[] = [];
  // Copy-on-write: most lines touch one loop, and an array copy is far cheaper than an object spread.
  let loops = state.loops;
  let loopsCopied = false;
  const decoders = { ...state.decoders };

  const feedLoops = (decoderId: string, loopInput: (loop: SiteLoop) => LoopInput | null, placeAt: (atUs: number | undefined) => number) => {
    for (const loop of index.loopsByDecoder.get(decoderId) ?? []) {
      const li = loopInput(loop);
      if (li) feedLoop(loop, li, placeAt);
    }
  };
  const feedLoop = (loop: SiteLoop, li: LoopInput, placeAt: (atUs: number | undefined) => number) => {
    const index = loop.index!;
    const result = stepLoop(loops[index]!, li, loop.settings);
    if (result.state !== loops[index]) {
      if (!loopsCopied) {
        loops = loops.slice();
        loopsCopied = true;
      }
      (loops as LoopClassifierState[])[index] = result.state;
    }
    for (const effect of result.effects) {
      effects.push({ kind: 'loop', loopId: loop.id, effect, atMs: placeAt('atUs' in effect ? effect.atUs : undefined) });
    }
  };
  const goOffline = (decoder: DecoderRuntime, reason: string): DecoderRuntime => {
    if (decoder.offline) return decoder;
    effects.push({ kind: 'decoder-offline', decoderId: decoder.id, atMs: nowMs, reason });
    feedLoops(decoder.id, () => ({ kind: 'offline' }), () => nowMs);
    return { ...decoder, offline: true };
  };

  switch (input.kind) {
    case 'clock': {
      for (const decoder of Object.values(decoders)) {
        const silenceMs = index.silenceMs.get(decoder.id) ?? 2000;
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
      if (decoder) decoders[input.decoderId] = { ...decoder, session: initialDecoderSession(), latestDecoderUs: null, latestHostMs: null };
      break;
    }
    case 'line': {
      let decoder = decoders[input.decoderId];
      if (!decoder) break;
      const stepped = stepDecoderSession(decoder.session, input.line);
      // One private copy per line, updated in place below and handed back (as stepLoop does).
      decoder = { ...decoder, session: stepped.session };
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
            const loop = index.loopByInput.get(`${decoder.id}#${event.input}`);
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
            break;
        }
      }
      decoders[input.decoderId] = decoder;
      break;
    }
  }
  return { state: { decoders, loops }, effects };
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
