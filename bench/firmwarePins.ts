import type { Band } from '../src/model/band.js';

/**
 * The decoder's wiring table (firmware/decoder/pins.h, README "The decoder firmware"), as the
 * simulator harness drives it: per loop, the standby comparator line and the pulse comparator line, both active high.
 */
export type Pin = { port: 'B' | 'C' | 'D'; bit: number };
export const LOOP_PINS: ReadonlyArray<{ standby: Pin; pulse: Pin }> = [
  { standby: { port: 'D', bit: 2 }, pulse: { port: 'D', bit: 3 } },
  { standby: { port: 'D', bit: 4 }, pulse: { port: 'D', bit: 5 } },
  { standby: { port: 'D', bit: 6 }, pulse: { port: 'D', bit: 7 } },
  { standby: { port: 'B', bit: 0 }, pulse: { port: 'B', bit: 1 } },
  { standby: { port: 'B', bit: 2 }, pulse: { port: 'B', bit: 3 } },
  { standby: { port: 'B', bit: 4 }, pulse: { port: 'C', bit: 0 } },
  { standby: { port: 'C', bit: 1 }, pulse: { port: 'C', bit: 2 } },
  { standby: { port: 'C', bit: 3 }, pulse: { port: 'C', bit: 4 } },
];

/** What the two comparators say for a band: O below both thresholds, N between, H above both. */
export function levelsFor(band: Band): { standby: 0 | 1; pulse: 0 | 1 } {
  return band === 'O' ? { standby: 0, pulse: 0 } : band === 'N' ? { standby: 1, pulse: 0 } : { standby: 1, pulse: 1 };
}
