import { toIso } from './isoTime.js';

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
