import type { Priority } from '../model/condition.js';
import { PRIORITY_RANK } from '../model/condition.js';
import type { WorstState } from '../mqtt/payloadSchemas.js';
import type { AlarmPayload, AlarmsPayload, DecoderPayload, EventPayload, HeartbeatPayload, LoopPayload, StatusPayload, SummaryPayload } from '../mqtt/sitePayloads.js';
import { parseSiteTopic } from '../mqtt/siteTopics.js';

/**
 * What the estate knows about its sites: nothing but what the broker delivered (retained state and
 * events), so a restart rebuilds it from the retained topics. Pure: `step(book, message, now)`.
 */
export interface SiteSeen {
  siteId: string;
  status: StatusPayload | null;
  summary: SummaryPayload | null;
  loops: Record<string, LoopPayload>;
  decoders: Record<string, DecoderPayload>;
  alarms: AlarmPayload[];
  /** When the site last said something while online (its own `at`, epoch ms). */
  lastSpokeMs: number | null;
  heartbeatIntervalMs: number | null;
  lastEventNo: number | null;
}

export interface EstateBook {
  prefix: string;
  sites: Record<string, SiteSeen>;
}

export type EstateEffect =
  | { kind: 'event'; siteId: string; event: EventPayload }
  /** Event numbers skipped: the consumer missed some (expired while it was away); the retained list stays right. */
  | { kind: 'gap'; siteId: string; expected: number; got: number };

export function initialEstateBook(prefix: string, siteIds: readonly string[]): EstateBook {
  return { prefix, sites: Object.fromEntries(siteIds.map((id) => [id, emptySite(id)])) };
}

function emptySite(siteId: string): SiteSeen {
  return { siteId, status: null, summary: null, loops: {}, decoders: {}, alarms: [], lastSpokeMs: null, heartbeatIntervalMs: null, lastEventNo: null };
}

const timeOf = (at: unknown): number | null => (typeof at === 'string' && Number.isFinite(Date.parse(at)) ? Date.parse(at) : null);

/** One message from the broker. Unknown sites and malformed bodies are ignored (the schemas are the contract). */
export function stepEstate(book: EstateBook, topic: string, body: unknown): { book: EstateBook; effects: EstateEffect[] } {
  const parsed = parseSiteTopic(book.prefix, topic);
  const previous = parsed ? book.sites[parsed.siteId] : undefined;
  if (!parsed || !previous || typeof body !== 'object' || body === null) return { book, effects: [] };
  const site: SiteSeen = { ...previous };
  const effects: EstateEffect[] = [];
  const spoke = (at: unknown) => {
    const ms = timeOf(at);
    if (ms !== null && (site.lastSpokeMs === null || ms > site.lastSpokeMs)) site.lastSpokeMs = ms;
  };
  switch (parsed.kind) {
    case 'status': {
      const status = body as StatusPayload;
      site.status = status;
      if (status.online) spoke(status.at);
      break;
    }
    case 'heartbeat': {
      const hb = body as HeartbeatPayload;
      site.heartbeatIntervalMs = hb.intervalS * 1000;
      spoke(hb.at);
      break;
    }
    case 'summary':
      site.summary = body as SummaryPayload;
      spoke(site.summary.at);
      break;
    case 'loop':
      site.loops = { ...site.loops, [parsed.key!]: body as LoopPayload };
      break;
    case 'decoder':
      site.decoders = { ...site.decoders, [parsed.key!]: body as DecoderPayload };
      break;
    case 'alarms': {
      const list = body as AlarmsPayload;
      site.alarms = list.alarms;
      spoke(list.at);
      if (list.lastEventNo !== null && (site.lastEventNo === null || list.lastEventNo > site.lastEventNo)) site.lastEventNo = list.lastEventNo;
      break;
    }
    case 'event': {
      const event = body as EventPayload;
      spoke(event.at);
      // At least once: a number already seen is a repeat and is dropped.
      if (site.lastEventNo !== null && event.eventNo <= site.lastEventNo) break;
      if (site.lastEventNo !== null && event.eventNo > site.lastEventNo + 1) effects.push({ kind: 'gap', siteId: site.siteId, expected: site.lastEventNo + 1, got: event.eventNo });
      site.lastEventNo = event.eventNo;
      effects.push({ kind: 'event', siteId: site.siteId, event });
      break;
    }
    default:
      return { book, effects: [] };
  }
  return { book: { ...book, sites: { ...book.sites, [site.siteId]: site } }, effects };
}

/** How the board ranks a site: its worst listed priority, or not reporting. */
export type SiteStanding = 'alarm' | 'not-reporting' | 'trouble' | 'system' | 'normal';
const STANDING_RANK = { alarm: 0, 'not-reporting': 1, trouble: 2, system: 3, normal: 4 } as const satisfies Record<SiteStanding, number>;
const DEFAULT_STALE_HEARTBEATS = 3;

/** Offline by its own status (or its Last Will), or silent past `staleAfterMs` (default three of its heartbeats). */
export function isReporting(site: SiteSeen, now: number, staleAfterMs: number | undefined): boolean {
  if (!site.status?.online || site.lastSpokeMs === null) return false;
  const limit = staleAfterMs ?? (site.heartbeatIntervalMs ?? 30_000) * DEFAULT_STALE_HEARTBEATS;
  return now - site.lastSpokeMs <= limit;
}

export function worstListed(site: SiteSeen): WorstState {
  let worst: Priority | null = null;
  for (const a of site.alarms) if (worst === null || PRIORITY_RANK[a.priority] < PRIORITY_RANK[worst]) worst = a.priority;
  return worst ?? 'normal';
}

export function standingOf(site: SiteSeen, now: number, staleAfterMs: number | undefined): SiteStanding {
  const worst = worstListed(site);
  if (worst === 'alarm') return 'alarm';
  if (!isReporting(site, now, staleAfterMs)) return 'not-reporting';
  return worst;
}

/** Worst first; among equals, the site silent longest first, then by id. */
export function orderSites(sites: readonly SiteSeen[], now: number, staleAfterMs: number | undefined): SiteSeen[] {
  return [...sites].sort(
    (a, b) =>
      STANDING_RANK[standingOf(a, now, staleAfterMs)] - STANDING_RANK[standingOf(b, now, staleAfterMs)] ||
      (a.lastSpokeMs ?? 0) - (b.lastSpokeMs ?? 0) ||
      a.siteId.localeCompare(b.siteId),
  );
}
