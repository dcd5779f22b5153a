import type { AlarmRecord } from '../alarms/alarmTypes.js';
import { intervalFigures, type LineQuality } from '../classify/index.js';
import type { SiteConfig } from '../config/schema.js';
import { LISTED_ALARM_STATES } from '../model/alarmState.js';
import { CONDITION_TEXT, PRIORITY_RANK } from '../model/condition.js';
import type { LoopState } from '../model/loopState.js';
import type { DurableWriter } from '../store/createDurableWriter.js';
import type { Store } from '../store/openStore.js';
import { recipientsOf } from '../store/alarmRepo.js';
import { outboxBacklog } from '../store/outboxRepo.js';
import { countOf } from '../model/plural.js';
import { formatElapsed } from '../notify/formatSiteTime.js';
import type {
  AlarmDetailView,
  AlarmView,
  DecoderView,
  HealthView,
  LineQualityView,
  LoopDetailView,
  LoopTimeline,
  LoopView,
  WebReadModel,
} from '../web/webPorts.js';
import type { MonitorCore } from './monitorCore.js';

export interface ReadModelOptions {
  config: SiteConfig;
  store: Store;
  core: MonitorCore;
  writer: DurableWriter;
  mailFailing: () => boolean;
  now: () => number;
}

function toAlarmView(alarm: AlarmRecord): AlarmView {
  return {
    id: alarm.id,
    loopId: alarm.loopId,
    source: alarm.source,
    condition: alarm.condition,
    priority: alarm.priority,
    state: alarm.state,
    active: alarm.active,
    raisedAtMs: alarm.raisedAt,
    clearedAtMs: alarm.clearedAt,
    ackedAtMs: alarm.ackedAt,
    ackedBy: alarm.ackedBy,
    note: alarm.note,
    shelvedUntilMs: alarm.shelvedUntil,
    shelveReason: alarm.shelveReason,
  };
}

function qualityView(quality: LineQuality, sinceMs: number): LineQualityView {
  const { meanMs, jitterMs } = intervalFigures(quality);
  return {
    pulses: quality.pulses,
    intervalMeanMs: meanMs,
    intervalJitterMs: jitterMs,
    outOfTolerance: quality.outOfTolerance,
    glitches: quality.glitches,
    longPulses: quality.longPulses,
    lostFrames: quality.lostFrames,
    sinceMs,
  };
}

/**
 * The web's read side. Live figures (states, pulses, open alarms) come from the monitor's memory, so
 * the board stays right even while storage is failing; history comes from the store.
 */
export function createReadModel(options: ReadModelOptions): WebReadModel {
  const { config, store, core } = options;
  const loopConfigs = new Map(config.loops.map((loop) => [loop.id, loop]));

  const listedAlarms = () => core.openAlarms().filter((a) => (LISTED_ALARM_STATES as readonly string[]).includes(a.state));

  /** The alarm a board tile shows first: highest priority, then active before cleared, then oldest. */
  const showsBefore = (a: AlarmRecord, b: AlarmRecord) =>
    PRIORITY_RANK[a.priority] - PRIORITY_RANK[b.priority] || Number(b.active) - Number(a.active) || a.raisedAt - b.raisedAt;

  /**
   * For every loop, the alarm its tile shows: its own, or its decoder's (loopId null, source the
   * decoder). One pass over the open alarms for the whole board; on a full tie the alarm listed
   * first wins, as a stable sort of the candidates would have it.
   */
  function topAlarms(): { byLoop: Map<string, AlarmRecord>; byDecoder: Map<string, AlarmRecord>; order: Map<AlarmRecord, number> } {
    const byLoop = new Map<string, AlarmRecord>();
    const byDecoder = new Map<string, AlarmRecord>();
    const order = new Map<AlarmRecord, number>();
    for (const alarm of listedAlarms()) {
      order.set(alarm, order.size);
      const map = alarm.loopId !== null ? byLoop : byDecoder;
      const key = alarm.loopId ?? alarm.source;
      const best = map.get(key);
      if (best === undefined || showsBefore(alarm, best) < 0) map.set(key, alarm);
    }
    return { byLoop, byDecoder, order };
  }

  function alarmOfLoop(loopId: string, decoderId: string, tops: ReturnType<typeof topAlarms>): LoopView['alarm'] {
    const own = tops.byLoop.get(loopId);
    const decoder = tops.byDecoder.get(decoderId);
    let top = own ?? decoder;
    if (own && decoder) {
      const cmp = showsBefore(own, decoder);
      top = cmp < 0 || (cmp === 0 && tops.order.get(own)! < tops.order.get(decoder)!) ? own : decoder;
    }
    return top ? { id: top.id, condition: top.condition, priority: top.priority, state: top.state, active: top.active } : null;
  }

  function loopView(loopId: string, tops: ReturnType<typeof topAlarms> = topAlarms()): LoopView | null {
    const loop = loopConfigs.get(loopId);
    const live = core.loopLive(loopId);
    if (!loop || !live) return null;
    return {
      id: loop.id,
      name: loop.name,
      location: loop.location ?? null,
      decoder: loop.decoder,
      input: loop.input,
      state: live.state,
      sinceMs: live.sinceMs,
      lastPulseAtMs: live.lastPulseAtMs,
      inService: core.isLoopInService(loop.id),
      serviceNote: core.outOfServiceNote(loop.id),
      alarm: alarmOfLoop(loop.id, loop.decoder, tops),
      intermittent: live.intermittent,
    };
  }

  function decoderView(decoderId: string): DecoderView | null {
    const decoder = config.decoders.find((d) => d.id === decoderId);
    const link = core.linkOf(decoderId);
    const runtime = core.decoderRuntime(decoderId);
    if (!decoder || !link || !runtime) return null;
    const counters = runtime.session.counters;
    return {
      id: decoder.id,
      name: decoder.name ?? null,
      port: decoder.port,
      status: runtime.offline ? 'offline' : link.state,
      connectedSinceMs: link.state === 'connected' ? link.sinceMs : null,
      firmware: runtime.session.hello?.firmware ?? null,
      inputs: runtime.session.hello?.loops ?? decoder.inputs ?? null,
      frames: counters.frames,
      badFrames: counters.dropped,
      lostFrames: counters.lost,
      lastFrameAtMs: runtime.latestHostMs,
    };
  }

  return {
    siteName: () => config.site.name,
    version: () => core.version(),
    loops: () => {
      const tops = topAlarms();
      return config.loops.map((loop) => loopView(loop.id, tops)).filter((v): v is LoopView => v !== null);
    },
    loop(id): LoopDetailView | null {
      const view = loopView(id);
      const live = core.loopLive(id);
      const loop = loopConfigs.get(id);
      if (!view || !live || !loop) return null;
      return { ...view, periodMs: loop.period_ms, quality: qualityView(live.quality, live.qualitySinceMs) };
    },
    alarms(status) {
      if (status === 'active') return listedAlarms().map(toAlarmView);
      // Open alarms from memory (they may not be on disk yet when storage is failing), the rest from the store.
      const open = core.openAlarms();
      const openIds = new Set(open.map((a) => a.id));
      const stored = store.alarms.list({ status: 'all', limit: 500 }).filter((a) => !openIds.has(a.id));
      return [...open, ...stored].sort((a, b) => b.raisedAt - a.raisedAt || b.id - a.id).map(toAlarmView);
    },
    alarm(id): AlarmDetailView | null {
      const alarm = core.openAlarms().find((a) => a.id === id) ?? store.alarms.get(id);
      if (!alarm) return null;
      const loop = alarm.loopId ? loopConfigs.get(alarm.loopId) : undefined;
      const contacts = new Map(config.contacts.map((c) => [c.id, c.name]));
      return {
        ...toAlarmView(alarm),
        loopName: loop?.name ?? null,
        location: loop?.location ?? null,
        notified: recipientsOf(store.db, id).map((r) => ({ contactId: r.contactId, contactName: contacts.get(r.contactId) ?? r.contactId, firstQueuedAtMs: r.firstQueuedAt })),
        audit: store.audit.forAlarm(id).map((entry) => ({ id: entry.id, atMs: entry.at, actor: entry.actor, action: entry.action, note: entry.note })),
      };
    },
    events(query) {
      const page = store.events.list(query);
      return {
        items: page.items.map((item) => ({
          id: item.id,
          atMs: item.atMs,
          loopId: item.loopId,
          kind: item.kind,
          priority: item.priority,
          summary: item.summary,
          actor: item.actor,
          fromState: item.fromState,
          toState: item.toState,
          action: item.action,
          note: item.note,
          condition: item.condition,
        })),
        nextCursor: page.nextCursor,
      };
    },
    decoders: () => config.decoders.map((d) => decoderView(d.id)).filter((v): v is DecoderView => v !== null),
    timeline(loopId, fromMs, toMs): LoopTimeline | null {
      if (!loopConfigs.has(loopId)) return null;
      const before = store.stateChanges.latestBefore(loopId, fromMs);
      const changes = store.stateChanges.list({ loopId, since: fromMs, until: toMs, limit: 5000 });
      const states: LoopTimeline['states'] = [];
      let current: LoopState = before?.to ?? 'unknown';
      let startedAt = fromMs;
      for (const change of changes) {
        if (change.at > startedAt) states.push({ fromMs: startedAt, toMs: change.at, state: current });
        current = change.to;
        startedAt = Math.max(startedAt, change.at);
      }
      if (toMs > startedAt) states.push({ fromMs: startedAt, toMs, state: current });
      const intervals = store.lineQuality.list(loopId, fromMs, toMs).map((row) => {
        const figures = intervalFigures(row.quality);
        return { atMs: row.bucketMs, meanMs: figures.meanMs, jitterMs: figures.jitterMs, outOfTolerance: row.quality.outOfTolerance };
      });
      return { fromMs, toMs, states, intervals };
    },
    health(): HealthView {
      const offline = config.decoders.filter((d) => {
        const runtime = core.decoderRuntime(d.id);
        return !runtime || runtime.offline || core.linkOf(d.id)?.state !== 'connected';
      });
      const failing = options.writer.status().failing;
      // Storage trouble the writer cannot see: a damaged file (integrity checks), a file that vanished or was replaced.
      const trouble = core.openAlarms().find((a) => a.source === 'system' && a.active && (a.condition === 'storage-damaged' || a.condition === 'storage-failing'));
      const storageTrouble = trouble ? CONDITION_TEXT[trouble.condition].words : null;
      const mailFailing = options.mailFailing();
      const mailLate = mailWaiting(store, config.mail.group_window, options.now());
      const checks: HealthView['checks'] = [
        { name: 'ingest', ok: offline.length === 0, reason: offline.length ? `decoder ${offline.map((d) => d.id).join(', ')} not connected or silent` : null },
        { name: 'store', ok: failing === null && storageTrouble === null, reason: failing ? `storage failing: ${failing.kind} (${failing.sqliteCode})` : storageTrouble },
        { name: 'mail', ok: !mailFailing && mailLate === null, reason: mailFailing ? `mail failing: ${mailLate ?? 'messages are waiting in the outbox'}` : mailLate },
      ];
      return { ok: checks.every((c) => c.ok), checks };
    },
  };
}

/**
 * Mail is healthy only while nothing in the outbox has waited longer than the grouping window (issue 16
 * item 4): a backlog that is still draining, or a message the server keeps refusing, is not healthy
 * even before "mail failing" is raised. Returns the reason, or null when nothing is late.
 */
function mailWaiting(store: Store, groupWindowMs: number, now: number): string | null {
  let backlog: ReturnType<typeof outboxBacklog>;
  try {
    backlog = outboxBacklog(store.db);
  } catch {
    // The store check says why; mail that cannot be looked at is not known to be flowing.
    return 'cannot read the outbox';
  }
  if (backlog.oldestCreatedAt === null) return null;
  const waitedMs = now - backlog.oldestCreatedAt;
  if (waitedMs <= groupWindowMs) return null;
  return `${countOf(backlog.pending, 'message')} waiting, the oldest for ${formatElapsed(waitedMs)}`;
}
