/**
 * When the daily report is due: the next instant the site's local clock reads report.at.
 * Below the export, local wall-clock time in IANA zones through Intl (ECMA-402), with no zone data
 * of our own. Local times that do not exist (spring-forward gap) or exist twice (fall-back overlap)
 * are resolved like the "compatible" disambiguation of TC39 Temporal: a gap moves forward by the
 * gap's length, an overlap takes the earlier instant.
 */
import { NotifyError } from './notifyError.js';

/**
 * The first instant strictly after `now` at which the local clock in `timeZone` reads `hhmm`.
 * Strictly after, so calling it again with the time just reported gives the next day: a report
 * on a fall-back night (the local time happens twice) goes once, at the earlier of the two. On a
 * spring-forward night a time inside the gap still happens once, shifted forward by the gap.
 */
export function nextReportAt(now: number, hhmm: string, timeZone: string): number {
  const match = /^([01]\d|2[0-3]):([0-5]\d)$/.exec(hhmm);
  if (!match) throw new NotifyError('PW_BAD_REPORT_TIME', `report.at: "${hhmm}" is not a local time as HH:MM`);
  const hour = Number(match[1]);
  const minute = Number(match[2]);
  const today = localDateTime(now, timeZone);
  // Three days covers any zone change; in practice today or tomorrow answers.
  // Stryker disable next-line EqualityOperator: today or tomorrow always answers (even a skipped day's time lands the next day); the third day is a margin
  for (let offset = 0; offset <= 2; offset++) {
    const date = addDays(today, offset);
    const at = zonedTimeToEpoch({ ...date, hour, minute }, timeZone);
    if (at > now) return at;
  }
  // Stryker disable next-line all: unreachable, see the loop above; kept so a zone-data surprise is an error, not undefined
  throw new NotifyError('PW_BAD_REPORT_TIME', `report.at: no ${hhmm} found in ${timeZone} after ${new Date(now).toISOString()}`);
}

const DAY_MS = 86_400_000;
const formatters = new Map<string, Intl.DateTimeFormat>();

function partsFormatter(timeZone: string): Intl.DateTimeFormat {
  let formatter = formatters.get(timeZone);
  // Stryker disable next-line ConditionalExpression: a cache; a new formatter on every call reads the same parts
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

interface LocalDateTime {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
}

/** The wall-clock reading in `timeZone` at instant `ms` (seconds resolution). */
function localDateTime(ms: number, timeZone: string): LocalDateTime {
  const fields: Record<string, number> = {};
  for (const part of partsFormatter(timeZone).formatToParts(new Date(ms))) {
    // Stryker disable next-line ConditionalExpression,StringLiteral: a literal part would only add an unread `literal` field
    if (part.type !== 'literal') fields[part.type] = Number(part.value);
  }
  return {
    year: fields.year!,
    month: fields.month!,
    day: fields.day!,
    // Some ICU versions print midnight as 24 even with h23.
    // Stryker disable next-line ConditionalExpression: the ICU bundled with Node 20 prints 00 (formatSiteTime.test covers midnight); older ones printed 24
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
function zoneOffsetMs(ms: number, timeZone: string): number {
  const whole = Math.floor(ms / 1000) * 1000;
  return localAsUtc(whole, timeZone) - whole;
}

/** The instant a wall-clock time happens in `timeZone` (see the module note for gaps and overlaps). */
function zonedTimeToEpoch(local: Omit<LocalDateTime, 'second'> & { second?: number }, timeZone: string): number {
  const wanted = Date.UTC(local.year, local.month - 1, local.day, local.hour, local.minute, local.second ?? 0);
  const offsetBefore = zoneOffsetMs(wanted - DAY_MS, timeZone);
  const offsetAfter = zoneOffsetMs(wanted + DAY_MS, timeZone);
  const valid = [wanted - offsetBefore, wanted - offsetAfter].filter((t) => localAsUtc(t, timeZone) === wanted);
  if (valid.length > 0) return Math.min(...valid);
  // In a gap: read the time with the offset in force before the change, i.e. shifted forward by the gap.
  return wanted - offsetBefore;
}

/** The calendar date `days` after the given one (proleptic Gregorian, no zone involved). */
function addDays(date: { year: number; month: number; day: number }, days: number): { year: number; month: number; day: number } {
  const d = new Date(Date.UTC(date.year, date.month - 1, date.day + days));
  return { year: d.getUTCFullYear(), month: d.getUTCMonth() + 1, day: d.getUTCDate() };
}
