import { describe, expect, it } from 'vitest';
import { nextReportAt } from '../../src/notify/nextReportAt.js';
import { NotifyError } from '../../src/notify/notifyError.js';

const at = (iso: string) => Date.parse(iso);

/*
 * Expected instants worked out by hand from the rules, not from the code under test:
 * - United Kingdom (Summer Time Act 1972, aligned with EU Directive 2000/84/EC): BST (UTC+1) from
 *   01:00 UTC on the last Sunday of March to 01:00 UTC on the last Sunday of October; GMT (UTC+0)
 *   otherwise. 2026: 29 March and 25 October.
 * - United States (Energy Policy Act of 2005, §110): DST from 02:00 local on the second Sunday of
 *   March to 02:00 local on the first Sunday of November; New York EST = UTC−5, EDT = UTC−4.
 *   2026: 8 March and 1 November.
 */
describe('nextReportAt, Europe/London', () => {
  const tz = 'Europe/London';

  it('an ordinary winter day: 07:00 GMT is 07:00 UTC', () => {
    expect(nextReportAt(at('2026-01-15T06:59:00Z'), '07:00', tz)).toBe(at('2026-01-15T07:00:00Z'));
    expect(nextReportAt(at('2026-01-15T07:00:00Z'), '07:00', tz)).toBe(at('2026-01-16T07:00:00Z'));
  });

  it('an ordinary summer day: 07:00 BST is 06:00 UTC', () => {
    expect(nextReportAt(at('2026-07-01T12:00:00Z'), '07:00', tz)).toBe(at('2026-07-02T06:00:00Z'));
  });

  it('07:00 across the spring change: 07:00 GMT on Saturday, 07:00 BST (06:00 UTC) on Sunday', () => {
    expect(nextReportAt(at('2026-03-27T07:00:00Z'), '07:00', tz)).toBe(at('2026-03-28T07:00:00Z'));
    expect(nextReportAt(at('2026-03-28T07:00:00Z'), '07:00', tz)).toBe(at('2026-03-29T06:00:00Z'));
  });

  it('01:30 on the spring-forward night (01:00–02:00 does not exist) still goes once, at 02:30 BST', () => {
    const saturday = nextReportAt(at('2026-03-27T01:30:00Z'), '01:30', tz);
    expect(saturday).toBe(at('2026-03-28T01:30:00Z')); // 01:30 GMT
    const sunday = nextReportAt(saturday, '01:30', tz);
    expect(sunday).toBe(at('2026-03-29T01:30:00Z')); // the gap moves it forward by an hour: 02:30 BST
    const monday = nextReportAt(sunday, '01:30', tz);
    expect(monday).toBe(at('2026-03-30T00:30:00Z')); // 01:30 BST
  });

  it('01:30 on the fall-back night (01:00–02:00 happens twice) goes once, at the first 01:30 (BST)', () => {
    const sunday = nextReportAt(at('2026-10-24T12:00:00Z'), '01:30', tz);
    expect(sunday).toBe(at('2026-10-25T00:30:00Z')); // 01:30 BST, the first pass
    // Not again at the second 01:30 (01:30 GMT = 01:30 UTC): next is Monday 01:30 GMT.
    expect(nextReportAt(sunday, '01:30', tz)).toBe(at('2026-10-26T01:30:00Z'));
    // A restart between the two passes does not bring the repeat back either.
    expect(nextReportAt(at('2026-10-25T01:10:00Z'), '01:30', tz)).toBe(at('2026-10-26T01:30:00Z'));
  });
});

describe('nextReportAt, America/New_York', () => {
  const tz = 'America/New_York';

  it('07:00 across the spring change: 12:00 UTC (EST) on Saturday, 11:00 UTC (EDT) on Sunday', () => {
    expect(nextReportAt(at('2026-03-07T11:00:00Z'), '07:00', tz)).toBe(at('2026-03-07T12:00:00Z'));
    expect(nextReportAt(at('2026-03-07T12:00:00Z'), '07:00', tz)).toBe(at('2026-03-08T11:00:00Z'));
  });

  it('02:30 on the spring-forward night (02:00–03:00 does not exist) goes once, at 03:30 EDT', () => {
    const sunday = nextReportAt(at('2026-03-07T07:30:00Z'), '02:30', tz);
    expect(sunday).toBe(at('2026-03-08T07:30:00Z')); // 02:30 read with EST = 03:30 EDT
    expect(nextReportAt(sunday, '02:30', tz)).toBe(at('2026-03-09T06:30:00Z')); // 02:30 EDT
  });

  it('01:30 on the fall-back night goes once, at 01:30 EDT (05:30 UTC), not again at 01:30 EST', () => {
    const sunday = nextReportAt(at('2026-10-31T12:00:00Z'), '01:30', tz);
    expect(sunday).toBe(at('2026-11-01T05:30:00Z'));
    expect(nextReportAt(sunday, '01:30', tz)).toBe(at('2026-11-02T06:30:00Z')); // Monday 01:30 EST
  });

  it('07:00 across the autumn change: 11:00 UTC (EDT) on Saturday, 12:00 UTC (EST) on Sunday', () => {
    expect(nextReportAt(at('2026-10-31T10:00:00Z'), '07:00', tz)).toBe(at('2026-10-31T11:00:00Z'));
    expect(nextReportAt(at('2026-10-31T11:00:00Z'), '07:00', tz)).toBe(at('2026-11-01T12:00:00Z'));
  });
});

describe('nextReportAt, bad input', () => {
  it('refuses a time that is not HH:MM with a code naming the setting', () => {
    expect(() => nextReportAt(0, '7am', 'UTC')).toThrow(NotifyError);
    expect(() => nextReportAt(0, '24:00', 'UTC')).toThrow(/report\.at/);
  });

  // README report.at: "local time (site time zone)", written HH:MM on the 24-hour clock (ISO 8601 §4.2.2.3: hh 00–23, mm 00–59).
  it.each([' 07:00', '07:00 ', '7:00', '07:0', '0700', '07-00', '07:60', '07:6x', '24:00', '29:00', '30:00', '2a:00', 'x07:00', '07:00x', ''])(
    'refuses %j, naming report.at and the value',
    (bad) => {
      let caught: unknown;
      try {
        nextReportAt(0, bad, 'UTC');
      } catch (error) {
        caught = error;
      }
      expect(caught).toBeInstanceOf(NotifyError);
      expect((caught as NotifyError).code).toBe('PW_BAD_REPORT_TIME');
      expect((caught as NotifyError).message).toBe(`report.at: "${bad}" is not a local time as HH:MM`);
    },
  );

  it.each([
    ['00:00', '2026-01-16T00:00:00Z'],
    ['09:59', '2026-01-16T09:59:00Z'],
    ['10:00', '2026-01-16T10:00:00Z'],
    ['12:01', '2026-01-15T12:01:00Z'],
    ['19:45', '2026-01-15T19:45:00Z'],
    ['20:00', '2026-01-15T20:00:00Z'],
    ['23:59', '2026-01-15T23:59:00Z'],
  ])('accepts %s: in UTC from noon on 15 January 2026 it falls at %s', (hhmm, expected) => {
    expect(nextReportAt(at('2026-01-15T12:00:00Z'), hhmm, 'UTC')).toBe(at(expected));
  });

  it('several zones in one process each keep their own offsets', () => {
    const noon = at('2026-07-01T12:00:00Z');
    expect(nextReportAt(noon, '18:00', 'Europe/London')).toBe(at('2026-07-01T17:00:00Z'));
    expect(nextReportAt(noon, '18:00', 'America/New_York')).toBe(at('2026-07-01T22:00:00Z'));
    expect(nextReportAt(noon, '18:00', 'Europe/London')).toBe(at('2026-07-01T17:00:00Z'));
  });
});