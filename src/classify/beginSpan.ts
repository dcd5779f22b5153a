import type { Band } from '../model/band.js';
import type { LoopRun } from './loopRun.js';

/** A new span of `band` from `atUs`. `from` is the band the line left, when it was seen; `byEdge` says `atUs` is the span's exact start. */
export function beginSpan(run: LoopRun, atUs: number, band: Band, from: Band | null, byEdge: boolean): void {
  const s = run.s;
  s.band = band;
  s.bandSinceUs = atUs;
  s.spanTimed = byEdge;
  s.spanStartKnown = byEdge;
  s.spanFrom = from;
  s.highMayBePulse = byEdge && band === 'H' && from === 'N';
}
