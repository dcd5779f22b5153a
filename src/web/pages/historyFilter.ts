import { PRIORITIES, type Priority } from '../../model/condition.js';
import { badInput } from '../webErrors.js';
import { parseLocalDateTime } from './siteTime.js';

/** The history page's filters, from its query string (all optional; all strings as a form sends them). */
export const HISTORY_PERIODS = { '24h': 86_400_000, '7d': 7 * 86_400_000, '30d': 30 * 86_400_000, '1y': 365 * 86_400_000, all: null } as const;
export type HistoryPeriod = keyof typeof HISTORY_PERIODS;

export interface HistoryFilter {
  loop: string | null;
  priority: Priority | null;
  period: HistoryPeriod;
  /** The datetime-local texts as given, to fill the form again. */
  fromText: string;
  toText: string;
  sinceMs: number | undefined;
  untilMs: number | undefined;
  cursor: string | undefined;
}

const KNOWN = new Set(['loop', 'priority', 'period', 'from', 'to', 'cursor']);

function single(query: Record<string, unknown>, key: string): string {
  const value = query[key];
  if (value === undefined) return '';
  if (typeof value !== 'string') throw badInput(key, 'must be given only once');
  if (value.length > 200) throw badInput(key, 'is too long');
  return value.trim();
}

export function parseHistoryFilter(query: Record<string, unknown>, loopIds: ReadonlySet<string>, timeZone: string, now: number): HistoryFilter {
  for (const key of Object.keys(query)) if (!KNOWN.has(key)) throw badInput(key, 'is not a filter this page knows');
  const loop = single(query, 'loop');
  if (loop !== '' && !loopIds.has(loop)) throw badInput('loop', `no loop has id "${loop}"`);
  const priority = single(query, 'priority');
  if (priority !== '' && !(PRIORITIES as readonly string[]).includes(priority)) throw badInput('priority', 'must be alarm, trouble or system');
  const periodText = single(query, 'period') || '7d';
  if (!(periodText in HISTORY_PERIODS)) throw badInput('period', `must be one of ${Object.keys(HISTORY_PERIODS).join(', ')}`);
  const period = periodText as HistoryPeriod;
  const fromText = single(query, 'from');
  const toText = single(query, 'to');
  const parseLocal = (text: string, field: string) => {
    if (text === '') return undefined;
    const ms = parseLocalDateTime(text, timeZone);
    if (ms === null) throw badInput(field, 'must be a date and time such as 2026-12-01T18:00');
    return ms;
  };
  const fromMs = parseLocal(fromText, 'from');
  const untilMs = parseLocal(toText, 'to');
  const periodMs = HISTORY_PERIODS[period];
  const sinceMs = fromMs ?? (periodMs === null ? undefined : now - periodMs);
  if (sinceMs !== undefined && untilMs !== undefined && untilMs <= sinceMs) throw badInput('to', 'must be later than the start');
  const cursor = single(query, 'cursor') || undefined;
  return { loop: loop || null, priority: (priority || null) as Priority | null, period, fromText, toText, sinceMs, untilMs, cursor };
}

/** The filter as a query string (without the cursor), for links to the next page and the CSV. */
export function historyQuery(filter: HistoryFilter, extra: Record<string, string> = {}): string {
  const params = new URLSearchParams();
  if (filter.loop) params.set('loop', filter.loop);
  if (filter.priority) params.set('priority', filter.priority);
  params.set('period', filter.period);
  if (filter.fromText) params.set('from', filter.fromText);
  if (filter.toText) params.set('to', filter.toText);
  for (const [k, v] of Object.entries(extra)) params.set(k, v);
  return params.toString();
}
