/**
 * Times for people, in the site's IANA time zone (pages); JSON stays ISO 8601 UTC. Intl does the
 * zone arithmetic, so daylight-saving changes come from the platform's tz database, not from us.
 */

const formatters = new Map<string, Intl.DateTimeFormat>();

function formatter(timeZone: string, kind: 'full' | 'time' | 'parts'): Intl.DateTimeFormat {
  const key = `${timeZone}|${kind}`;
  let f = formatters.get(key);
  if (!f) {
    const options: Intl.DateTimeFormatOptions =
      kind === 'full'
        ? { timeZone, weekday: 'short', day: 'numeric', month: 'short', hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }
        : kind === 'time'
          ? { timeZone, hour: '2-digit', minute: '2-digit', hourCycle: 'h23' }
          : { timeZone, year: 'numeric', month: '2-digit', day: '2-digit', hour: '2-digit', minute: '2-digit', second: '2-digit', hourCycle: 'h23' };
    f = new Intl.DateTimeFormat('en-GB', options);
    formatters.set(key, f);
  }
  return f;
}

interface WallClock {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
}

export function wallClock(ms: number, timeZone: string): WallClock {
  const parts = Object.fromEntries(formatter(timeZone, 'parts').formatToParts(ms).map((p) => [p.type, p.value]));
  return {
    year: Number(parts.year),
    month: Number(parts.month),
    day: Number(parts.day),
    hour: Number(parts.hour),
    minute: Number(parts.minute),
    second: Number(parts.second),
  };
}

/** "20:03" for today, "Tue 1 Dec, 20:03" otherwise. */
export function siteTime(ms: number, timeZone: string, now: number): string {
  const a = wallClock(ms, timeZone);
  const b = wallClock(now, timeZone);
  if (a.year === b.year && a.month === b.month && a.day === b.day) return formatter(timeZone, 'time').format(ms);
  return formatter(timeZone, 'full').format(ms);
}

export function siteClock(ms: number, timeZone: string): string {
  return formatter(timeZone, 'time').format(ms);
}

/** Full local date and time, for CSV and titles: 2026-12-01 20:03:07. */
export function siteDateTime(ms: number, timeZone: string): string {
  const w = wallClock(ms, timeZone);
  const pad = (n: number) => String(n).padStart(2, '0');
  return `${w.year}-${pad(w.month)}-${pad(w.day)} ${pad(w.hour)}:${pad(w.minute)}:${pad(w.second)}`;
}

/** A span in words: "0.4 s", "12 s", "5 min", "2 h 5 min", "3 days". */
export function spanWords(ms: number): string {
  const s = Math.max(0, ms) / 1000;
  if (s < 10) return `${s.toFixed(1)} s`;
  if (s < 60) return `${Math.floor(s)} s`;
  const min = Math.floor(s / 60);
  if (min < 60) return `${min} min`;
  const h = Math.floor(min / 60);
  if (h < 48) return min % 60 === 0 ? `${h} h` : `${h} h ${min % 60} min`;
  return `${Math.floor(h / 24)} days`;
}

/** How long ago: "just now" under a second (never "0.0 s ago"), else "12 s ago", "5 min ago". */
export function agoWords(ms: number): string {
  return ms < 1000 ? 'just now' : `${spanWords(ms)} ago`;
}

/** How long a state has lasted: whole units, since tenths of a second mean nothing here. */
export function sinceWords(ms: number): string {
  return ms < 60_000 ? 'under a minute' : spanWords(ms);
}

/**
 * The UTC instant of a wall-clock time in `timeZone` (for the history filter's local date inputs).
 * A time that falls in a daylight-saving gap or overlap gets one of the two candidate instants;
 * an hour either way is harmless for a filter.
 */
export function zonedToUtc(local: Omit<WallClock, 'second'> & { second?: number }, timeZone: string): number {
  const asUtc = Date.UTC(local.year, local.month - 1, local.day, local.hour, local.minute, local.second ?? 0);
  const offsetAt = (instant: number) => {
    const w = wallClock(instant, timeZone);
    return Date.UTC(w.year, w.month - 1, w.day, w.hour, w.minute, w.second) - Math.floor(instant / 1000) * 1000;
  };
  let guess = asUtc - offsetAt(asUtc);
  const second = asUtc - offsetAt(guess);
  if (second !== guess) guess = Math.min(guess, second);
  return guess;
}

/** Parses the value of an `<input type="datetime-local">` (YYYY-MM-DDTHH:MM[:SS]) in the site's zone. */
export function parseLocalDateTime(text: string, timeZone: string): number | null {
  const m = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2}))?$/.exec(text);
  if (!m) return null;
  const [year, month, day, hour, minute, second] = m.slice(1).map((v) => (v === undefined ? 0 : Number(v))) as number[];
  if (month! < 1 || month! > 12 || day! < 1 || day! > 31 || hour! > 23 || minute! > 59 || second! > 59) return null;
  return zonedToUtc({ year: year!, month: month!, day: day!, hour: hour!, minute: minute!, second: second! }, timeZone);
}
