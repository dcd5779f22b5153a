import type { Band } from '../model/band.js';
import type { DropReason, FaultCode } from './frame.js';

/**
 * What the decoder session (src/protocol/decoderSession.ts) makes of each line: events on a
 * monotonic, unwrapped decoder time `decoderUs`: the decoder's own µs count (the first frame's raw
 * time to begin with), unwrapped across the 32-bit wrap and carried forward across restarts, so it
 * never goes back within one connection. A restart whose HELLO was lost shows as a RESTART fault.
 */
export type DecoderEvent =
  | { kind: 'hello'; version: 1; loops: number; firmware: string }
  | { kind: 'edge'; input: number; band: Band; decoderUs: number }
  | { kind: 'tick'; bands: Band[]; decoderUs: number }
  | { kind: 'fault'; code: FaultCode; decoderUs: number }
  | { kind: 'lost'; count: number; decoderUs: number }
  | { kind: 'dropped'; reason: DropReason; detail: string };
