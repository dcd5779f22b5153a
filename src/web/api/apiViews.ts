import type { z } from 'zod';
import type {
  AlarmDetailView,
  AlarmView,
  DecoderView,
  EventView,
  HealthView,
  LoopDetailView,
  LoopTimeline,
  LoopView,
} from '../webPorts.js';
import type {
  alarmDetailSchema,
  alarmSchema,
  decoderSchema,
  eventSchema,
  healthSchema,
  loopDetailSchema,
  loopSchema,
  timelineSchema,
} from './apiSchemas.js';

/** Read-model views (epoch ms) to API bodies (ISO 8601 UTC). */

/**
 * Each instant is formatted once: a board repeats the same few hundred times (every loop's "since"
 * and last pulse) on every request, and toISOString was a quarter of a /loops response's cost.
 * The memo is cleared when it fills, so it stays small whatever the clock does.
 */
const formatted = new Map<number, string>();
const FORMATTED_MAX = 4096;

export const isoTime = (ms: number): string => {
  let text = formatted.get(ms);
  if (text === undefined) {
    text = new Date(ms).toISOString();
    if (formatted.size >= FORMATTED_MAX) formatted.clear();
    formatted.set(ms, text);
  }
  return text;
};
export const isoOrNull = (ms: number | null): string | null => (ms === null ? null : isoTime(ms));

export function loopToApi(loop: LoopView): z.infer<typeof loopSchema> {
  return {
    id: loop.id,
    name: loop.name,
    location: loop.location,
    decoder: loop.decoder,
    input: loop.input,
    state: loop.state,
    since: isoTime(loop.sinceMs),
    lastPulseAt: isoOrNull(loop.lastPulseAtMs),
    inService: loop.inService,
    serviceNote: loop.serviceNote,
    intermittent: loop.intermittent,
    alarm: loop.alarm ? { id: loop.alarm.id, condition: loop.alarm.condition, priority: loop.alarm.priority, state: loop.alarm.state } : null,
  };
}

export function loopDetailToApi(loop: LoopDetailView): z.infer<typeof loopDetailSchema> {
  const q = loop.quality;
  return {
    ...loopToApi(loop),
    periodMs: loop.periodMs,
    lineQuality: {
      since: isoTime(q.sinceMs),
      pulses: q.pulses,
      intervalMeanMs: q.intervalMeanMs,
      intervalJitterMs: q.intervalJitterMs,
      outOfTolerance: q.outOfTolerance,
      glitches: q.glitches,
      longPulses: q.longPulses,
      lostFrames: q.lostFrames,
    },
  };
}

export function alarmToApi(alarm: AlarmView): z.infer<typeof alarmSchema> {
  return {
    id: alarm.id,
    loopId: alarm.loopId,
    source: alarm.source,
    condition: alarm.condition,
    priority: alarm.priority,
    state: alarm.state,
    active: alarm.active,
    raisedAt: isoTime(alarm.raisedAtMs),
    clearedAt: isoOrNull(alarm.clearedAtMs),
    ackedAt: isoOrNull(alarm.ackedAtMs),
    ackedBy: alarm.ackedBy,
    note: alarm.note,
    shelvedUntil: isoOrNull(alarm.shelvedUntilMs),
    shelveReason: alarm.shelveReason,
  };
}

export function alarmDetailToApi(alarm: AlarmDetailView): z.infer<typeof alarmDetailSchema> {
  return {
    ...alarmToApi(alarm),
    loopName: alarm.loopName,
    location: alarm.location,
    notified: alarm.notified.map((n) => ({ contactId: n.contactId, contactName: n.contactName, firstQueuedAt: isoTime(n.firstQueuedAtMs) })),
    audit: alarm.audit.map((a) => ({ id: a.id, at: isoTime(a.atMs), actor: a.actor, action: a.action, note: a.note })),
  };
}

export function eventToApi(event: EventView): z.infer<typeof eventSchema> {
  return {
    id: event.id,
    at: isoTime(event.atMs),
    loopId: event.loopId,
    kind: event.kind,
    priority: event.priority,
    summary: event.summary,
    actor: event.actor,
    fromState: event.fromState,
    toState: event.toState,
  };
}

export function decoderToApi(decoder: DecoderView): z.infer<typeof decoderSchema> {
  return {
    id: decoder.id,
    name: decoder.name,
    port: decoder.port,
    status: decoder.status,
    connectedSince: isoOrNull(decoder.connectedSinceMs),
    firmware: decoder.firmware,
    inputs: decoder.inputs,
    frames: decoder.frames,
    badFrames: decoder.badFrames,
    lostFrames: decoder.lostFrames,
    lastFrameAt: isoOrNull(decoder.lastFrameAtMs),
  };
}

export function timelineToApi(timeline: LoopTimeline): z.infer<typeof timelineSchema> {
  return {
    from: isoTime(timeline.fromMs),
    to: isoTime(timeline.toMs),
    states: timeline.states.map((s) => ({ from: isoTime(s.fromMs), to: isoTime(s.toMs), state: s.state })),
    intervals: timeline.intervals.map((i) => ({ at: isoTime(i.atMs), meanMs: i.meanMs, jitterMs: i.jitterMs, outOfTolerance: i.outOfTolerance })),
  };
}

export function healthToApi(health: HealthView): z.infer<typeof healthSchema> {
  const checks = health.checks.map((c) => ({ name: c.name, ok: c.ok, reason: c.reason }));
  const failing = checks.filter((c) => !c.ok);
  return {
    // A failing check means not ok, whatever the summary flag says.
    ok: health.ok && failing.length === 0,
    checks,
    reasons: failing.map((c) => `${c.name}: ${c.reason ?? 'not working'}`),
  };
}
