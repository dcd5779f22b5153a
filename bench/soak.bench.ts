import { statSync } from 'node:fs';
import { performance } from 'node:perf_hooks';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import type { ScenarioInput } from '../src/sim/scenarioSchema.js';
import { applyRetention } from '../src/store/retention.js';
import { databaseSize } from '../src/store/openDatabase.js';
import type { BenchOptions, BenchResult, BenchRow } from './benchTypes.js';
import { infoRow } from './benchTypes.js';
import { benchSiteConfig } from './support/benchSite.js';
import { openDrivenMonitor } from './support/drivenMonitor.js';
import { openSimulatedDecoder } from './support/simulatedStream.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * Soak: 30 simulated days for 32 loops through the whole ingest path on a synthetic clock, with the
 * daily retention applied at each simulated midnight. Memory must stay flat and under 150 MB.
 */

const LOOPS = 32;
const DAY_MS = 86_400_000;
const CHUNK_MS = 60_000;
const RSS_LIMIT_MB = 150;
/** "Flat": what the process may grow between the end of day 1 and the end of the run. */
const FLAT_GROWTH = 0.1;
const START_MS = Date.UTC(2031, 1, 1, 0, 0, 0);
/** Reduced stream: each node pulses every 30 s instead of 500 ms (see notes). */
const SOAK_PERIOD_MS = 30_000;
const TICK_MS = 250;

export async function run(opts: BenchOptions): Promise<BenchResult> {
  return soakFor(opts.smoke ? 1 : 30, opts.smoke);
}

/** The soak over any number of days (run() uses 30, or 1 for a smoke run). */
export async function soakFor(days: number, smoke = false): Promise<BenchResult> {
  const gc = exposeGc();
  const folder = makeTempFolder('soak');
  try {
    const config = benchSiteConfig({
      loops: LOOPS,
      port: 'tcp://127.0.0.1:9',
      dbPath: folder.path('site.db'),
      loopSettings: { period_ms: SOAK_PERIOD_MS },
    });
    const simulator = openSimulatedDecoder({ loops: LOOPS, periodMs: SOAK_PERIOD_MS, jitter: 0.1, tickMs: TICK_MS, events: dailyTrouble(days), seed: 11 });
    const monitor = openDrivenMonitor(config, START_MS);
    gc();
    const rssStartMb = rssMb();
    let rssDay1Mb = rssStartMb;
    let lines = 0;
    let simulatorMs = 0;
    let acked = 0;
    let lastRetention = { edgesDeleted: 0, bytesAfter: 0 };
    const cpuBefore = process.cpuUsage();
    const wallBefore = performance.now();

    for (let day = 1; day <= days; day++) {
      const dayEndMs = day * DAY_MS;
      for (let t = (day - 1) * DAY_MS + CHUNK_MS; t <= dayEndMs; t += CHUNK_MS) {
        const s0 = performance.now();
        const batch = simulator.advanceTo(t * 1000);
        simulatorMs += performance.now() - s0;
        for (const { atUs, line } of batch) monitor.line(line, START_MS + Math.floor(atUs / 1000));
        lines += batch.length;
        monitor.advanceTo(START_MS + t);
      }
      // The daily job, and an operator who acknowledges the day's alarms.
      const nowMs = START_MS + dayEndMs;
      for (const alarm of monitor.core.openAlarms()) {
        if (alarm.state !== 'unacknowledged' && alarm.state !== 'returned-unacknowledged') continue;
        monitor.core.alarmAction({ kind: 'ack', alarmId: alarm.id, actor: 'bench', note: 'daily round' }, nowMs);
        acked += 1;
      }
      lastRetention = applyRetention(monitor.store, config.storage.retention, nowMs);
      if (day === 1) {
        gc();
        rssDay1Mb = rssMb();
      }
      if (process.env.PW_BENCH_TRACE_MEMORY) {
        const m = process.memoryUsage();
        const mb = (n: number) => (n / 2 ** 20).toFixed(1);
        process.stderr.write(`soak day ${day}: rss ${mb(m.rss)} heapTotal ${mb(m.heapTotal)} heapUsed ${mb(m.heapUsed)} external ${mb(m.external)} MB\n`);
      }
    }
    const cpu = process.cpuUsage(cpuBefore);
    const wallS = (performance.now() - wallBefore) / 1000;
    const cpuS = (cpu.user + cpu.system) / 1e6;
    gc();
    const rssEndMb = rssMb();
    const heapEndMb = process.memoryUsage().heapUsed / 2 ** 20;
    const dbBytes = databaseSize(monitor.store.db).bytes;
    const counts = monitor.store.db
      .prepare("SELECT (SELECT count(*) FROM state_changes) AS changes, (SELECT count(*) FROM edges) AS edges, (SELECT count(*) FROM line_quality) AS quality, (SELECT count(*) FROM alarms) AS alarms")
      .get() as { changes: number; edges: number; quality: number; alarms: number };
    const failures = monitor.storageFailures();
    monitor.close();
    const fileBytes = statSync(config.storage.path).size;
    if (failures > 0) throw new Error(`storage failed ${failures} time(s) during the soak`);

    const growth = rssEndMb - rssDay1Mb;
    const rssRow: BenchRow = {
      figure: 'RSS at the end',
      value: rssEndMb,
      unit: 'MB',
      reference: 'RSS after day 1',
      referenceValue: rssDay1Mb,
      ratio: rssEndMb / rssDay1Mb,
      target: `< ${RSS_LIMIT_MB} MB, ≤ +${FLAT_GROWTH * 100} % after day 1`,
      met: rssEndMb < RSS_LIMIT_MB && growth <= FLAT_GROWTH * rssDay1Mb,
    };
    const monitorCpuS = Math.max(0, cpuS - simulatorMs / 1000);
    return {
      name: 'soak',
      title: `Soak: ${days} simulated day(s), ${LOOPS} loops${smoke ? ' (smoke)' : ''}`,
      rows: [
        infoRow('RSS at the start', rssStartMb, 'MB'),
        rssRow,
        infoRow('JS heap in use at the end', heapEndMb, 'MB'),
        infoRow('database after retention (page_count × page_size)', dbBytes / 2 ** 20, 'MB'),
        infoRow('database file on disk', fileBytes / 2 ** 20, 'MB'),
        infoRow('CPU per simulated day, whole process', cpuS / days, 's'),
        infoRow('CPU per simulated day, monitor only (simulator time taken out)', monitorCpuS / days, 's'),
        infoRow('lines fed', lines, 'lines'),
      ],
      notes: [
        `Fed: the project's simulated decoder, ${LOOPS} loops, TICK every ${TICK_MS} ms (the protocol's slowest), each node pulsing 1 ms every ${SOAK_PERIOD_MS / 1000} s ±10 % ` +
          `(loops configured with period_ms ${SOAK_PERIOD_MS}, so the trip window is 3 such periods) instead of every 500 ms: ${(lines / days / 1e6).toFixed(2)} M lines per day rather than about 11.4 M.`,
        `Each day: 4 freezes (trip, then thaw), 1 cable cut and repair, 1 short and clear, 1 burst of 5 lost frames, on rotating loops; every alarm acknowledged at midnight; retention applied at midnight (edges kept 6 h, minute rows folded after 90 days).`,
        `At the end: ${counts.changes} state changes, ${counts.alarms} alarms, ${counts.edges} edges, ${counts.quality} line-quality rows; last retention removed ${lastRetention.edgesDeleted} edges. ${acked} alarms acknowledged. Wall time ${wallS.toFixed(1)} s.`,
        `RSS read after a forced garbage collection (flag set at run time). Backups are not part of this run.`,
      ],
    };
  } finally {
    folder.remove();
  }
}

function rssMb(): number {
  return process.memoryUsage().rss / 2 ** 20;
}

/** A full collection before each memory reading, so "flat" compares live memory rather than GC timing. */
function exposeGc(): () => void {
  const existing = (globalThis as { gc?: () => void }).gc;
  if (existing) return existing;
  try {
    setFlagsFromString('--expose-gc');
    return runInNewContext('gc') as () => void;
  } catch {
    return () => undefined;
  }
}

/** Each day's invented trouble on rotating loops; the service soak feeds the same days. */
export function dailyTrouble(days: number, loops = LOOPS): NonNullable<ScenarioInput['events']> {
  const events: NonNullable<ScenarioInput['events']> = [];
  const hour = 3_600_000;
  for (let day = 0; day < days; day++) {
    const base = day * DAY_MS;
    const loop = (k: number) => ((day * 7 + k) % loops) + 1;
    for (let k = 0; k < 4; k++) {
      events.push({ at: base + (2 + k * 5) * hour, input: loop(k), action: 'freeze' }, { at: base + (3 + k * 5) * hour, input: loop(k), action: 'thaw' });
    }
    events.push({ at: base + 9.5 * hour, input: loop(4), action: 'cut' }, { at: base + 10 * hour, input: loop(4), action: 'repair' });
    events.push({ at: base + 14.5 * hour, input: loop(5), action: 'short' }, { at: base + 15 * hour, input: loop(5), action: 'clear-short' });
    events.push({ at: base + 20 * hour, action: 'lose-frames', count: 5 });
  }
  return events;
}
