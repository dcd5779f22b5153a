import { describe, expect, it } from 'vitest';
import { toIso } from '../../src/store/isoTime.js';

/**
 * toIso formats the minute once and appends seconds and milliseconds. The reference is ECMAScript's
 * own Date.prototype.toISOString (ECMA-262, Date Time String Format), called fresh for every value.
 */
describe('toIso', () => {
  const reference = (ms: number) => new Date(ms).toISOString();

  it('gives the same text as toISOString across minute, hour, day, year and leap-day boundaries', () => {
    const edges = [
      0,
      999,
      59_999,
      60_000,
      Date.UTC(2031, 0, 6, 6, 0, 0),
      Date.UTC(2028, 1, 29, 23, 59, 59, 999),
      Date.UTC(2028, 2, 1, 0, 0, 0, 0),
      Date.UTC(2030, 11, 31, 23, 59, 59, 999),
      Date.UTC(2031, 0, 1),
      Date.UTC(9999, 11, 31, 23, 59, 59, 999),
    ];
    for (const ms of edges) expect(toIso(ms), String(ms)).toBe(reference(ms));
  });

  it('gives the same text for a stream of nearby times, forwards and back', () => {
    let ms = Date.UTC(2031, 5, 30, 23, 58, 0);
    const seen: number[] = [];
    for (let i = 0; i < 20_000; i++) {
      ms += (i * 7919) % 997; // deterministic steps of 0–996 ms
      seen.push(ms);
      expect(toIso(ms)).toBe(reference(ms));
    }
    for (const back of seen.reverse().slice(0, 2000)) expect(toIso(back)).toBe(reference(back));
  });

  it('falls back to toISOString outside years 0000–9999 and for fractional or invalid times', () => {
    for (const ms of [-1, -62_198_755_200_000, 253_402_300_800_000, 1.5]) expect(toIso(ms)).toBe(reference(ms));
    expect(() => toIso(Number.NaN)).toThrow(RangeError);
  });
});
