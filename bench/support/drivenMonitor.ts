import type { SiteConfig } from '../../src/config/schema.js';
import { createMonitorCore, type MonitorCore } from '../../src/daemon/monitorCore.js';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { silentLogger } from './silentLogger.js';

/**
 * The monitor's whole ingest path — parse, classify, alarms, SQLite — without timers: the bench owns
 * a synthetic clock and plays the daemon's scheduler itself (fast tick every 250 ms, line quality at
 * each minute boundary), so simulated days pass as fast as the code can go.
 */
export interface DrivenMonitor {
  core: MonitorCore;
  store: Store;
  /** Feed one line that arrived at host time `atMs` (never earlier than the last). */
  line(line: string, atMs: number): void;
  /** Run the scheduler's work due up to `toMs`. */
  advanceTo(toMs: number): void;
  /** Storage failures the writer reported (a bench on a healthy disk expects none). */
  storageFailures(): number;
  close(): void;
}

/** Same cadence as the daemon's timers in startMonitor. */
const FAST_TICK_MS = 250;
const MINUTE_MS = 60_000;

export function openDrivenMonitor(config: SiteConfig, startMs: number): DrivenMonitor {
  let clock = startMs;
  let failures = 0;
  const store = openStore({ path: config.storage.path, cacheKib: config.storage.cache_kib });
  const writer = createDurableWriter({
    store,
    now: () => clock,
    onFailing: () => {
      failures += 1;
    },
    onRecovered: () => undefined,
  });
  const core = createMonitorCore({ config, store, writer, logger: silentLogger(), now: clock });
  const decoderId = config.decoders[0]!.id;
  core.linkStatus(decoderId, { state: 'connected' }, clock);
  let nextFastMs = clock + FAST_TICK_MS;
  let nextMinuteMs = Math.floor(clock / MINUTE_MS) * MINUTE_MS + MINUTE_MS;

  const advanceTo = (toMs: number) => {
    for (;;) {
      const next = Math.min(nextFastMs, nextMinuteMs);
      if (next > toMs) break;
      clock = next;
      if (next === nextMinuteMs) {
        core.minute(clock, nextMinuteMs - MINUTE_MS);
        nextMinuteMs += MINUTE_MS;
      } else {
        core.tick(clock);
        if (writer.pending() > 0) writer.flush();
        nextFastMs += FAST_TICK_MS;
      }
    }
    clock = Math.max(clock, toMs);
  };

  return {
    core,
    store,
    line(line, atMs) {
      advanceTo(atMs);
      core.line(decoderId, line, atMs);
    },
    advanceTo,
    storageFailures: () => failures,
    close() {
      core.flushEdges();
      writer.flush();
      store.close();
    },
  };
}
