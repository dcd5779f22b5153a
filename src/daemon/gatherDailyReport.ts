import type { SiteConfig } from '../config/schema.js';
import { REPORT_PERIOD_MS, type DailyReportData } from '../notify/composeDailyReport.js';
import { publicUrlFor } from '../notify/noticeSettings.js';
import { outboxBacklog } from '../store/outboxRepo.js';
import type { Store } from '../store/openStore.js';
import type { WebReadModel } from '../web/webPorts.js';

/** Collects what the daily report shows, from the read model (live) and the store (the last 24 h). */
export function gatherDailyReport(options: {
  config: SiteConfig;
  store: Store;
  read: WebReadModel;
  now: number;
  nextReportAt: number;
  monitorStartedAt: number;
}): DailyReportData {
  const { config, store, read, now } = options;
  const since = now - REPORT_PERIOD_MS;
  const listed = new Map(read.alarms('active').map((a) => [a.id, a]));
  const recent = read.alarms('all').filter((a) => a.raisedAtMs >= since || listed.has(a.id));
  const mailAudit = store.audit.list({ since, until: now + 1, limit: 10_000 });
  return {
    siteName: config.site.name,
    timeZone: config.site.timezone,
    publicUrl: publicUrlFor(config.web),
    generatedAt: now,
    nextReportAt: options.nextReportAt,
    monitorStartedAt: options.monitorStartedAt,
    loops: read.loops().map((loop) => ({
      id: loop.id,
      name: loop.name,
      location: loop.location,
      state: loop.state,
      sinceMs: loop.sinceMs,
      lastPulseAtMs: loop.lastPulseAtMs,
      inService: loop.inService,
      serviceNote: loop.serviceNote,
    })),
    alarms: recent.map((a) => ({
      id: a.id,
      source: a.source,
      loopId: a.loopId,
      condition: a.condition,
      priority: a.priority,
      state: a.state,
      raisedAt: a.raisedAtMs,
      clearedAt: a.clearedAtMs,
      ackedAt: a.ackedAtMs,
      ackedBy: a.ackedBy,
      note: a.note,
    })),
    decoders: read.decoders().map((d) => {
      const uptime = store.decoderSessions.uptimeSince(d.id, since, now);
      return {
        id: d.id,
        name: d.name,
        status: d.status,
        connectedMsInPeriod: uptime.connectedMs,
        restarts: Math.max(0, uptime.sessions - 1),
        frames: uptime.frames,
        badFrames: uptime.badFrames,
        lostFrames: uptime.lostFrames,
      };
    }),
    mail: {
      pending: outboxBacklog(store.db).pending,
      sentInPeriod: mailAudit.filter((e) => e.action === 'mail-sent').length,
      failedAttemptsInPeriod: mailAudit.filter((e) => e.action === 'mail-failed').length,
    },
  };
}
