/**
 * Local wall-clock time in IANA zones through Intl (ECMA-402), with no zone data of our own.
 * Local times that do not exist (spring-forward gap) or exist twice (fall-back overlap) are resolved
 * like the "compatible" disambiguation of TC39 Temporal: a gap moves forward by the gap's length,
 * an overlap takes the earlier instant.
 */
const DAY_MS = 86_400_000;
const formatters = new Map<string, Intl.DateTimeFormat>();

function partsFormatter(timeZone: string): Intl.DateTimeFormat {
  let formatter = formatters.get(timeZone);
  if (!formatter) {
    formatter = new Intl.DateTimeFormat('en-US', {
      timeZone,
      hourCycle: 'h23',
      year: 'numeric',
      month: 'numeric',
      day: 'numeric',
      hour: 'numeric',
      minute: 'numeric',
      second: 'numeric',
    });
    formatters.set(timeZone, formatter);
  }
  return formatter;
}

export interface LocalDateTime {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
}

/** The wall-clock reading in `timeZone` at instant `ms` (seconds resolution). */
export function localDateTime(ms: number, timeZone: string): LocalDateTime {
  const fields: Record<string, number> = {};
  for (const part of partsFormatter(timeZone).formatToParts(new Date(ms))) {
    if (part.type !== 'literal') fields[part.type] = Number(part.value);
  }
  return {
    year: fields.year!,
    month: fields.month!,
    day: fields.day!,
    // Some ICU versions print midnight as 24 even with h23.
    hour: fields.hour === 24 ? 0 : fields.hour!,
    minute: fields.minute!,
    second: fields.second!,
  };
}

/** The wall-clock reading written as if it were UTC: lets offsets be plain subtraction. */
function localAsUtc(ms: number, timeZone: string): number {
  const t = localDateTime(ms, timeZone);
  return Date.UTC(t.year, t.month - 1, t.day, t.hour, t.minute, t.second);
}

/** Offset of the zone from UTC at instant `ms`, in ms (east positive). */
export function zoneOffsetMs(ms: number, timeZone: string): number {
  const whole = Math.floor(ms / 1000) * 1000;
  return localAsUtc(whole, timeZone) - whole;
}

/** The instant a wall-clock time happens in `timeZone` (see the module note for gaps and overlaps). */
export function zonedTimeToEpoch(local: Omit<LocalDateTime, 'second'> & { second?: number }, timeZone: string): number {
  const wanted = Date.UTC(local.year, local.month - 1, local.day, local.hour, local.minute, local.second ?? 0);
  const offsetBefore = zoneOffsetMs(wanted - DAY_MS, timeZone);
  const offsetAfter = zoneOffsetMs(wanted + DAY_MS, timeZone);
  const valid = [wanted - offsetBefore, wanted - offsetAfter].filter((t) => localAsUtc(t, timeZone) === wanted);
  if (valid.length > 0) return Math.min(...valid);
  // In a gap: read the time with the offset in force before the change, i.e. shifted forward by the gap.
  return wanted - offsetBefore;
}

/** The calendar date `days` after the given one (proleptic Gregorian, no zone involved). */
export function addDays(date: { year: number; month: number; day: number }, days: number): { year: number; month: number; day: number } {
  const d = new Date(Date.UTC(date.year, date.month - 1, date.day + days));
  return { year: d.getUTCFullYear(), month: d.getUTCMonth() + 1, day: d.getUTCDate() };
}
