import { describe, expect, it } from 'vitest';
import { parseLocalDateTime, siteDateTime, spanWords, zonedToUtc } from '../../../src/web/pages/siteTime.js';

describe('site time (IANA zones through Intl)', () => {
  // UK clocks: GMT (UTC+0) in winter, BST (UTC+1) from the last Sunday of March to the last Sunday
  // of October (Summer Time Order 2002; dates from memory: 29 March and 25 October in 2026).
  it('reads a local summer time in Europe/London as UTC+1', () => {
    expect(new Date(zonedToUtc({ year: 2026, month: 7, day: 1, hour: 12, minute: 0 }, 'Europe/London')).toISOString()).toBe('2026-07-01T11:00:00.000Z');
  });

  it('reads a local winter time in Europe/London as UTC+0', () => {
    expect(parseLocalDateTime('2026-12-01T18:30', 'Europe/London')).toBe(Date.parse('2026-12-01T18:30:00Z'));
  });

  it('handles zones far from UTC (US Central: CST is UTC-6 in January)', () => {
    expect(parseLocalDateTime('2026-01-15T06:00', 'America/Chicago')).toBe(Date.parse('2026-01-15T12:00:00Z'));
  });

  it('shows UTC instants on the site clock, on both sides of the October change', () => {
    expect(siteDateTime(Date.parse('2026-10-25T00:30:00Z'), 'Europe/London')).toBe('2026-10-25 01:30:00');
    expect(siteDateTime(Date.parse('2026-10-25T01:30:00Z'), 'Europe/London')).toBe('2026-10-25 01:30:00');
  });

  it('refuses text that is not a datetime-local value', () => {
    for (const text of ['yesterday', '2026-13-01T00:00', '2026-12-01 18:00', '2026-12-01T25:00']) {
      expect(parseLocalDateTime(text, 'Europe/London'), text).toBeNull();
    }
  });

  it('words spans plainly', () => {
    expect(spanWords(400)).toBe('0.4 s');
    expect(spanWords(42_000)).toBe('42 s');
    expect(spanWords(12 * 60_000)).toBe('12 min');
    expect(spanWords(125 * 60_000)).toBe('2 h 5 min');
    expect(spanWords(3 * 86_400_000)).toBe('3 days');
  });
});
