import type { AlarmRecord } from '../alarms/alarmTypes.js';
import type { AlarmState } from '../model/alarmState.js';
import type { Condition, Priority } from '../model/condition.js';
import { PRIORITY_RANK } from '../model/condition.js';
import type { LoopState } from '../model/loopState.js';
import type { AlarmView, DecoderView, LoopDetailView } from '../web/webPorts.js';
import type { AlarmEventKind, CommandAction, WorstState } from './payloadSchemas.js';

/**
 * Payloads for the topic layout, composed from the read model's views (epoch ms in, ISO 8601 UTC out).
 * Pure: the publisher passes `now`. Each shape is the TypeScript face of one schema in payloadSchemas.ts.
 */

const iso = (ms: number) => new Date(ms).toISOString();
const isoOrNull = (ms: number | null) => (ms === null ? null : iso(ms));

export interface StatusPayload { online: boolean; at: string; version: string | null; startedAt: string | null; reason: string | null }
export interface HeartbeatPayload { at: string; version: string | null; uptimeS: number; intervalS: number; lastEventNo: number | null }
export interface AlarmPayload {
  id: number; loopId: string | null; source: string; condition: Condition; priority: Priority; state: AlarmState; active: boolean;
  raisedAt: string; clearedAt: string | null; ackedAt: string | null; ackedBy: string | null; note: string | null;
  shelvedUntil: string | null; shelveReason: string | null;
}
export interface SummaryPayload {
  at: string; siteName: string; timezone: string; url: string | null; worst: WorstState;
  counts: Record<Priority, number>;
  loops: { total: number; healthy: number; tripped: number; open: number; shorted: number; offline: number; unknown: number; outOfService: number };
}
export interface LoopPayload {
  id: string; name: string; location: string | null; state: LoopState; since: string; lastPulseAt: string | null;
  inService: boolean; intermittent: boolean; periodMs: number;
  /** `active` false with an unacknowledged state: back to normal, still needs acknowledging. */
  alarm: { id: number; condition: Condition; priority: Priority; state: AlarmState; active: boolean } | null;
  lineQuality: { since: string; pulses: number; intervalMeanMs: number | null; intervalJitterMs: number | null; outOfTolerance: number; glitches: number; longPulses: number; lostFrames: number };
}
export interface DecoderPayload {
  id: string; name: string | null; status: DecoderView['status']; connectedSince: string | null; firmware: string | null;
  frames: number; badFrames: number; lostFrames: number; lastFrameAt: string | null;
}
export interface EventPayload { eventNo: number; kind: AlarmEventKind; at: string; actor: string; note: string | null; alarm: AlarmPayload }
export interface AlarmsPayload { at: string; lastEventNo: number | null; alarms: AlarmPayload[] }
export interface CommandPayload { action: CommandAction; alarmId: number; note?: string; minutes?: number; reason?: string; token?: string }
export interface ReplyPayload { ok: boolean; at: string; action: CommandAction | null; alarmId: number | null; code: string | null; message: string | null }

export function statusPayload(online: boolean, now: number, version: string | null, startedAt: number | null, reason: string | null): StatusPayload {
  return { online, at: iso(now), version, startedAt: isoOrNull(startedAt), reason };
}

export function alarmPayload(alarm: AlarmView): AlarmPayload {
  return {
    id: alarm.id, loopId: alarm.loopId, source: alarm.source, condition: alarm.condition, priority: alarm.priority, state: alarm.state,
    active: alarm.active, raisedAt: iso(alarm.raisedAtMs), clearedAt: isoOrNull(alarm.clearedAtMs), ackedAt: isoOrNull(alarm.ackedAtMs),
    ackedBy: alarm.ackedBy, note: alarm.note, shelvedUntil: isoOrNull(alarm.shelvedUntilMs), shelveReason: alarm.shelveReason,
  };
}

export function alarmRecordPayload(alarm: AlarmRecord): AlarmPayload {
  return alarmPayload({
    id: alarm.id, loopId: alarm.loopId, source: alarm.source, condition: alarm.condition, priority: alarm.priority, state: alarm.state,
    active: alarm.active, raisedAtMs: alarm.raisedAt, clearedAtMs: alarm.clearedAt, ackedAtMs: alarm.ackedAt, ackedBy: alarm.ackedBy,
    note: alarm.note, shelvedUntilMs: alarm.shelvedUntil, shelveReason: alarm.shelveReason,
  });
}

/** Worst first: any listed alarm of priority alarm beats trouble beats system; none is normal. */
export function worstOf(priorities: readonly Priority[]): WorstState {
  let worst: Priority | null = null;
  for (const p of priorities) if (worst === null || PRIORITY_RANK[p] < PRIORITY_RANK[worst]) worst = p;
  return worst ?? 'normal';
}

export function summaryPayload(
  site: { name: string; timezone: string; url: string | null },
  loops: readonly LoopDetailView[],
  activeAlarms: readonly AlarmView[],
  now: number,
): SummaryPayload {
  const counts: Record<Priority, number> = { alarm: 0, trouble: 0, system: 0 };
  for (const alarm of activeAlarms) counts[alarm.priority] += 1;
  const byState = { total: loops.length, healthy: 0, tripped: 0, open: 0, shorted: 0, offline: 0, unknown: 0, outOfService: 0 };
  for (const loop of loops) {
    if (!loop.inService) byState.outOfService += 1;
    else byState[loop.state] += 1;
  }
  return { at: iso(now), siteName: site.name, timezone: site.timezone, url: site.url, worst: worstOf(activeAlarms.map((a) => a.priority)), counts, loops: byState };
}

export function loopPayload(loop: LoopDetailView): LoopPayload {
  const q = loop.quality;
  return {
    id: loop.id, name: loop.name, location: loop.location, state: loop.state, since: iso(loop.sinceMs), lastPulseAt: isoOrNull(loop.lastPulseAtMs),
    inService: loop.inService, intermittent: loop.intermittent, periodMs: loop.periodMs, alarm: loop.alarm,
    lineQuality: {
      since: iso(q.sinceMs), pulses: q.pulses, intervalMeanMs: q.intervalMeanMs, intervalJitterMs: q.intervalJitterMs,
      outOfTolerance: q.outOfTolerance, glitches: q.glitches, longPulses: q.longPulses, lostFrames: q.lostFrames,
    },
  };
}

/** The port path stays private to the site: the broker is shared. */
export function decoderPayload(decoder: DecoderView): DecoderPayload {
  return {
    id: decoder.id, name: decoder.name, status: decoder.status, connectedSince: isoOrNull(decoder.connectedSinceMs), firmware: decoder.firmware,
    frames: decoder.frames, badFrames: decoder.badFrames, lostFrames: decoder.lostFrames, lastFrameAt: isoOrNull(decoder.lastFrameAtMs),
  };
}
