import type { LineQuality, LoopEffect } from '../classify/loopTypes.js';
import type { LoopClassifierState } from '../classify/index.js';
import type { LoopSettings } from '../classify/loopSettings.js';
import type { DecoderSession } from '../protocol/decoderSession.js';
import type { DecoderEvent } from '../protocol/decoderEvent.js';
import type { Band } from '../model/band.js';

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
  offline: boolean;
}

export interface SiteState {
  decoders: Record<string, DecoderRuntime>;
  /** Classifier state per loop, in the order of the site definition (`SiteIndex.positions` maps ids). */
  loops: readonly LoopClassifierState[];
}

/** What one step of the site produced, with decoder times already placed on the host clock. */
export type SiteEffect =
  | { kind: 'loop'; loopId: string; effect: LoopEffect; atMs: number }
  | { kind: 'edge'; decoderId: string; input: number; band: Band; decoderUs: number; atMs: number }
  | { kind: 'decoder'; decoderId: string; event: DecoderEvent; atMs: number }
  | { kind: 'decoder-offline'; decoderId: string; atMs: number; reason: string }
  | { kind: 'decoder-online'; decoderId: string; atMs: number };

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
