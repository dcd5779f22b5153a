import type { Band } from '../model/band.js';
import type { DropReason, FaultCode } from './frame.js';

/**
 * What the decoder session (src/protocol/decoderSession.ts) makes of each line: events on a
 * monotonic, unwrapped decoder time `decoderUs` (µs since the session's first frame epoch).
 */
export type DecoderEvent =
  | { kind: 'hello'; version: 1; loops: number; firmware: string }
  | { kind: 'edge'; input: number; band: Band; decoderUs: number }
  | { kind: 'tick'; bands: Band[]; decoderUs: number }
  | { kind: 'fault'; code: FaultCode; decoderUs: number }
  | { kind: 'lost'; count: number; decoderUs: number }
  | { kind: 'dropped'; reason: DropReason; detail: string };
