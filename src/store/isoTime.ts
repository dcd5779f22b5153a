// Time as the store keeps it: ISO text in columns, epoch ms in code, hour and minute buckets, and the time-range filters of paged lists.
import { StoreError } from './storeError.js';

/**
 * The store's API speaks epoch ms; its columns hold ISO 8601 UTC text, which sorts as time does.
 * Rows come in bursts within the same minute (an edge batch is a second of them), so the
 * "YYYY-MM-DDTHH:MM:" part is formatted once per minute and only seconds and milliseconds are
 * appended; the text is the same as toISOString gives (UTC minutes have no leap seconds in ECMAScript time).
 */
let minuteStartMs = Number.NaN;
let minutePrefix = '';
/** toISOString's plain four-digit-year form holds from year 0 to 9999. */
const LAST_PLAIN_YEAR_MS = 253_402_300_800_000;

export function toIso(ms: number): string {
  const intoMinute = ms - minuteStartMs;
  if (!(intoMinute >= 0 && intoMinute < 60_000 && Number.isInteger(ms))) {
    if (!(ms >= 0 && ms < LAST_PLAIN_YEAR_MS && Number.isInteger(ms))) return new Date(ms).toISOString();
    minuteStartMs = ms - (ms % 60_000);
    minutePrefix = new Date(minuteStartMs).toISOString().slice(0, 17);
    return toIso(ms);
  }
  const seconds = Math.floor(intoMinute / 1000);
  const millis = intoMinute % 1000;
  return `${minutePrefix}${seconds < 10 ? '0' : ''}${seconds}.${millis < 10 ? '00' : millis < 100 ? '0' : ''}${millis}Z`;
}

export function toIsoOrNull(ms: number | null | undefined): string | null {
  return ms === null || ms === undefined ? null : toIso(ms);
}

/** `where` names the column, so a bad row is reported by name rather than as NaN further on. */
export function fromIso(text: string, where: string): number {
  const ms = Date.parse(text);
  if (Number.isNaN(ms)) throw new StoreError('PW_STORE_BAD_ROW', `${where}: "${text}" is not an ISO 8601 time`);
  return ms;
}

export function fromIsoOrNull(text: string | null, where: string): number | null {
  return text === null ? null : fromIso(text, where);
}

/** The optional filters every paged history list takes: a loop, a time range (epoch ms) and a cursor id. */
export interface RangeQuery {
  loopId?: string;
  since?: number;
  until?: number;
  afterId?: number;
  limit: number;
}

/** Named SQL parameters for a RangeQuery: absent filters become NULL, which the queries treat as "any". */
export function rangeParams(query: RangeQuery) {
  return {
    loopId: query.loopId ?? null,
    since: query.since === undefined ? null : toIso(query.since),
    until: query.until === undefined ? null : toIso(query.until),
    afterId: query.afterId ?? 0,
    limit: query.limit,
  };
}

export const MINUTE_MS = 60_000;
export const HOUR_MS = 3_600_000;

export function floorTo(ms: number, stepMs: number): number {
  return Math.floor(ms / stepMs) * stepMs;
}
