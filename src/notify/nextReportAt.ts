import { NotifyError } from './notifyError.js';
import { addDays, localDateTime, zonedTimeToEpoch } from './zonedTime.js';

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
  for (let offset = 0; offset <= 2; offset++) {
    const date = addDays(today, offset);
    const at = zonedTimeToEpoch({ ...date, hour, minute }, timeZone);
    if (at > now) return at;
  }
  throw new NotifyError('PW_BAD_REPORT_TIME', `report.at: no ${hhmm} found in ${timeZone} after ${new Date(now).toISOString()}`);
}
