import { describe, expect, it } from 'vitest';
import { formatElapsed, formatSiteAndUtc, formatSiteTime, formatUtc } from '../../src/notify/formatSiteTime.js';

/**
 * The times every mail prints. Expected readings are worked out by hand:
 * - weekdays from the Gregorian calendar (1 January 2026 is a Thursday);
 * - United Kingdom clocks (Summer Time Act 1972, with EU Directive 2000/84/EC): GMT = UTC+0 in
 *   winter, BST = UTC+1 from 01:00 UTC on the last Sunday of March (29 March 2026) to 01:00 UTC on
 *   the last Sunday of October (25 October 2026);
 * - the UTC form is ISO 8601's date and time with a space for the "T" (as RFC 3339 §5.6 allows),
 *   whole seconds, cut rather than rounded.
 */
const at = (iso: string) => Date.parse(iso);

describe('formatUtc', () => {
  it('is the ISO 8601 date and time to the second, with a space and "UTC"', () => {
    expect(formatUtc(at('2026-03-03T06:12:07Z'))).toBe('2026-03-03 06:12:07 UTC');
    // Milliseconds are cut, never rounded up into the next second.
    expect(formatUtc(at('2026-12-31T23:59:59.999Z'))).toBe('2026-12-31 23:59:59 UTC');
  });
});

describe('formatSiteTime', () => {
  it('winter in London reads GMT, summer BST, with the weekday, day, month and year', () => {
    expect(formatSiteTime(at('2026-03-03T06:12:07Z'), 'Europe/London')).toBe('Tue 3 Mar 2026, 06:12:07 GMT');
    // 1 July 2026 is a Wednesday; 12:00 UTC is 13:00 BST.
    expect(formatSiteTime(at('2026-07-01T12:00:00Z'), 'Europe/London')).toBe('Wed 1 Jul 2026, 13:00:00 BST');
  });

  it('the hour of midnight reads 00, never 24 (24-hour clock, ISO 8601 §4.2.2)', () => {
    expect(formatSiteTime(at('2026-12-01T00:05:09Z'), 'Europe/London')).toBe('Tue 1 Dec 2026, 00:05:09 GMT');
  });

  it('two zones asked for one after the other each keep their own clock', () => {
    const instant = at('2026-07-01T12:00:00Z');
    expect(formatSiteTime(instant, 'Europe/London')).toBe('Wed 1 Jul 2026, 13:00:00 BST');
    expect(formatSiteTime(instant, 'UTC')).toBe('Wed 1 Jul 2026, 12:00:00 UTC');
    expect(formatSiteTime(instant, 'Europe/London')).toBe('Wed 1 Jul 2026, 13:00:00 BST');
  });
});

describe('formatSiteAndUtc', () => {
  it('a site on UTC (either name) gets the UTC form alone; any other zone gets its own time with UTC beside it', () => {
    const instant = at('2026-07-01T12:00:00Z');
    expect(formatSiteAndUtc(instant, 'UTC')).toBe('2026-07-01 12:00:00 UTC');
    expect(formatSiteAndUtc(instant, 'Etc/UTC')).toBe('2026-07-01 12:00:00 UTC');
    expect(formatSiteAndUtc(instant, 'Europe/London')).toBe('Wed 1 Jul 2026, 13:00:00 BST (2026-07-01 12:00:00 UTC)');
  });
});

describe('formatElapsed', () => {
  const S = 1000;
  const MIN = 60 * S;
  const H = 60 * MIN;
  const D = 24 * H;
  const cases: Array<[number, string]> = [
    [0, '0 s'],
    [-5 * S, '0 s'], // a clock that stepped back never gives a negative duration
    [499, '0 s'],
    [500, '1 s'], // to the nearest second, halves up
    [59 * S, '59 s'],
    [59.5 * S, '1 min'],
    [MIN, '1 min'],
    [59 * MIN + 59 * S, '59 min'],
    [H, '1 h 0 min'],
    [H + 5 * MIN + 30 * S, '1 h 5 min'],
    [23 * H + 59 * MIN, '23 h 59 min'],
    [D, '1 d 0 h'],
    [D + H + 59 * MIN, '1 d 1 h'],
    [2 * D + 3 * H + 4 * MIN + 5 * S, '2 d 3 h'],
    [40 * D, '40 d 0 h'],
  ];
  for (const [ms, words] of cases) {
    it(`${ms} ms reads "${words}"`, () => {
      expect(formatElapsed(ms)).toBe(words);
    });
  }
});
