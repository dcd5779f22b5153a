import type { LineQuality, LoopEffect } from '../classify/loopTypes.js';
import type { LoopClassifierState } from '../classify/index.js';
import type { LoopSettings } from '../classify/loopSettings.js';
import type { DecoderSession } from '../protocol/decoderSession.js';
import type { DecoderEvent } from '../protocol/decoderEvent.js';
import type { Band } from '../model/band.js';
import type { LoopState } from '../model/loopState.js';

/** A configured loop as the site step sees it. */
export interface SiteLoop {
  id: string;
  /** Position in the site definition, filled in by indexSite. */
  index?: number;
  decoderId: string;
  input: number;
  settings: LoopSettings;
}

export interface DecoderRuntime {
  id: string;
  session: DecoderSession;
  /** Host time (epoch ms) of the last valid line; null before the first. */
  lastValidAtMs: number | null;
  /** Latest unwrapped decoder time seen and the host time it arrived, to place decoder times on the wall clock. */
  latestDecoderUs: number | null;
  latestHostMs: number | null;
  /**
   * The smallest host-minus-decoder time seen (ms), allowed to creep up slowly for a decoder clock that
   * runs slow: a frame arriving with much less than this claims a time the host has not reached yet.
   */
  hostLagMs: number | null;
  offline: boolean;
}

/** Trips of one decoder's loops held back for the mass-trip rule (see siteStep). */
export interface TripHold {
  /** Host time the first trip was held. */
  sinceMs: number;
  loopIds: readonly string[];
  /** The state each held loop was in before its trip, as the shell last heard it. */
  from: Readonly<Record<string, LoopState>>;
  /** The held loops' effects, in order, released as they were unless the rule applies. */
  effects: readonly SiteEffect[];
}

export interface SiteState {
  decoders: Record<string, DecoderRuntime>;
  /** Classifier state per loop, in the order of the site definition (`SiteIndex.positions` maps ids). */
  loops: readonly LoopClassifierState[];
  tripHolds: Readonly<Record<string, TripHold>>;
  /** Until when a decoder's next mass trip is believed (the rule holds back only the first of a run). */
  massTripBelievedUntil: Readonly<Record<string, number>>;
}

/** What one step of the site produced, with decoder times already placed on the host clock. */
export type SiteEffect =
  | { kind: 'loop'; loopId: string; effect: LoopEffect; atMs: number }
  | { kind: 'edge'; decoderId: string; input: number; band: Band; decoderUs: number; atMs: number }
  | { kind: 'decoder'; decoderId: string; event: DecoderEvent; atMs: number }
  | { kind: 'decoder-offline'; decoderId: string; atMs: number; reason: string }
  | { kind: 'decoder-online'; decoderId: string; atMs: number }
  /** The decoder's clock ran far ahead of the host's: its frame was not applied, its loops start over. */
  | { kind: 'decoder-clock'; decoderId: string; atMs: number; aheadMs: number }
  /** Every loop of a decoder tripped at once: held back as one decoder trouble (see siteStep's rule). */
  | { kind: 'decoder-mass-trip'; decoderId: string; atMs: number; loops: number };

export type SiteInput =
  | { kind: 'line'; decoderId: string; line: string }
  | { kind: 'link-down'; decoderId: string; reason: string }
  | { kind: 'link-up'; decoderId: string }
  /** Host clock advanced: decides silence (offline). */
  | { kind: 'clock' };

export interface SiteQuality {
  loopId: string;
  quality: LineQuality;
}
