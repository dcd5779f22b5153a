import type { SiteConfig } from '../config/schema.js';
import { DROP_REASONS } from '../protocol/frame.js';
import type { Metrics } from '../ops/metrics.js';
import { databaseSize } from '../store/openDatabase.js';
import { outboxBacklog } from '../store/outboxRepo.js';
import type { Store } from '../store/openStore.js';
import type { MonitorCore } from './monitorCore.js';

/**
 * Brings the Prometheus metrics up to date from the monitor's own counters, on each scrape: the
 * monitor keeps its figures anyway, so the hot path pays nothing for metrics.
 */
export function createMetricsSync(options: { config: SiteConfig; core: MonitorCore; store: Store; metrics: Metrics; mailFailures: () => number }) {
  const { config, core, store, metrics } = options;
  const seen = new Map<string, number>();
  const advance = (key: string, total: number, inc: (by: number) => void) => {
    const previous = seen.get(key) ?? 0;
    // A new decoder session starts its counts again from zero.
    const delta = total >= previous ? total - previous : total;
    if (delta > 0) inc(delta);
    seen.set(key, total);
  };
  for (const decoder of config.decoders) metrics.addDecoder(decoder.id);

  return function sync(): void {
    for (const decoder of config.decoders) {
      const counters = core.decoderRuntime(decoder.id)?.session.counters;
      if (!counters) continue;
      advance(`frames:${decoder.id}`, counters.frames, (by) => metrics.frames.inc({ decoder: decoder.id }, by));
      advance(`lost:${decoder.id}`, counters.lost, (by) => metrics.lostFrames.inc({ decoder: decoder.id }, by));
      for (const reason of DROP_REASONS) {
        advance(`bad:${decoder.id}:${reason}`, counters.droppedBy[reason], (by) => metrics.badFrames.inc({ decoder: decoder.id, reason }, by));
      }
    }
    for (const loop of config.loops) {
      const live = core.loopLive(loop.id);
      if (live) metrics.setLoopState(loop.id, live.state);
    }
    const counts = { alarm: 0, trouble: 0, system: 0 };
    for (const alarm of core.openAlarms()) if (alarm.active || alarm.state !== 'normal') counts[alarm.priority] += 1;
    metrics.setActiveAlarms(counts);
    advance('mail-failures', options.mailFailures(), (by) => metrics.mailFailures.inc(by));
    try {
      metrics.outboxPending.set(outboxBacklog(store.db).pending);
      metrics.databaseSizeBytes.set(databaseSize(store.db).bytes);
    } catch {
      // A failing disk must not break the scrape; /healthz and the board report it.
    }
  };
}
