import { performance } from 'node:perf_hooks';
import { loopSettingsFromConfig } from '../src/classify/loopSettings.js';
import type { SiteConfig } from '../src/config/schema.js';
import { indexSite, initialSiteState, stepSite } from '../src/site/siteStep.js';
import type { BenchOptions, BenchResult } from './benchTypes.js';
import { infoRow } from './benchTypes.js';
import { benchSiteConfig } from './support/benchSite.js';
import { openDrivenMonitor } from './support/drivenMonitor.js';
import { median } from './support/percentile.js';
import { freezeEvents, meanWireBytes, simulatedLines } from './support/simulatedStream.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * Ingest throughput for 64 loops: frames/s through the pure site step (parse + classify), and
 * through the whole path (MonitorCore on a temp SQLite file: parse, classify, alarms, edges and state
 * changes stored), both as a multiple of what a 115200-baud 8N1 serial link can carry.
 */

const LOOPS = 64;
const START_MS = Date.UTC(2031, 0, 6, 6, 0, 0);
/**
 * 8N1 framing: one start bit, eight data bits, one stop bit = 10 bit times per byte (the usual UART
 * frame, e.g. TIA-232 practice), so 115200 baud carries 11 520 bytes/s.
 */
const LINK_BAUD = 115_200;
const BITS_PER_BYTE_8N1 = 10;
const TARGET_RATIO = 250;

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const durationMs = opts.smoke ? 60_000 : 900_000;
  const repeats = opts.smoke ? 1 : 3;
  const lines = simulatedLines({ loops: LOOPS, durationMs, events: freezeEvents(LOOPS, durationMs, 30_000, 10_000) });
  const hostMs = lines.map((l) => START_MS + Math.round(l.atUs / 1000));
  const bytesPerLine = meanWireBytes(lines);
  const linkLinesPerS = LINK_BAUD / BITS_PER_BYTE_8N1 / bytesPerLine;

  const folder = makeTempFolder('ingest');
  try {
    const pureRates: number[] = [];
    const storeRates: number[] = [];
    let stateChanges = 0;
    for (let r = 0; r < repeats; r++) {
      pureRates.push(pureRate(siteFor(folder.path(`pure-${r}.db`)), lines, hostMs));
      const measured = wholePathRate(siteFor(folder.path(`whole-${r}.db`)), lines, hostMs);
      storeRates.push(measured.rate);
      stateChanges = measured.stateChanges;
    }
    const pure = median(pureRates);
    const whole = median(storeRates);
    const ratioRow = (figure: string, value: number) => ({
      figure,
      value,
      unit: 'frames/s',
      reference: `115200-baud 8N1 link (${bytesPerLine.toFixed(1)} B/line)`,
      referenceValue: linkLinesPerS,
      ratio: value / linkLinesPerS,
      target: `≥ ${TARGET_RATIO}×`,
      met: value / linkLinesPerS >= TARGET_RATIO,
    });
    return {
      name: 'ingest',
      title: `Ingest, ${LOOPS} loops`,
      rows: [
        { ...ratioRow('parse + classify (site step)', pure), target: null, met: null },
        ratioRow('whole path with the store', whole),
        infoRow('state changes stored per run', stateChanges, 'rows'),
      ],
      notes: [
        `Stream: ${lines.length} lines from the project's simulated decoder — ${LOOPS} loops, 1 ms pulse every 500 ms ±10 %, TICK every 200 ms, ` +
          `one loop in turn frozen for 10 s every 30 s — ${durationMs / 1000} s of decoder time fed as fast as the code takes it (synthetic clock).`,
        `Whole path: MonitorCore + durable writer on a temp SQLite file (WAL), fast tick every 250 ms and minute rows on the synthetic clock, as the daemon schedules them.`,
        `Median of ${repeats} run(s). Link rate: 115200 baud ÷ 10 bits per 8N1 byte ÷ mean line length incl. LF = ${linkLinesPerS.toFixed(0)} lines/s.`,
      ],
    };
  } finally {
    folder.remove();
  }
}

function siteFor(dbPath: string): SiteConfig {
  return benchSiteConfig({ loops: LOOPS, port: 'tcp://127.0.0.1:9', dbPath });
}

function pureRate(config: SiteConfig, lines: ReadonlyArray<{ line: string }>, hostMs: readonly number[]): number {
  const index = indexSite({
    loops: config.loops.map((loop) => ({ id: loop.id, decoderId: loop.decoder, input: loop.input, settings: loopSettingsFromConfig(loop) })),
    decoders: config.decoders.map((d) => ({ id: d.id, silenceMs: d.silence })),
  });
  let state = initialSiteState(index.definition, hostMs[0]!);
  let effects = 0;
  const started = performance.now();
  for (let i = 0; i < lines.length; i++) {
    const stepped = stepSite(index, state, { kind: 'line', decoderId: 'main', line: lines[i]!.line }, hostMs[i]!);
    state = stepped.state;
    effects += stepped.effects.length;
  }
  const seconds = (performance.now() - started) / 1000;
  if (effects === 0) throw new Error('the site step produced no effects: the stream is not being decoded');
  return lines.length / seconds;
}

function wholePathRate(config: SiteConfig, lines: ReadonlyArray<{ line: string }>, hostMs: readonly number[]): { rate: number; stateChanges: number } {
  const monitor = openDrivenMonitor(config, hostMs[0]!);
  const started = performance.now();
  for (let i = 0; i < lines.length; i++) monitor.line(lines[i]!.line, hostMs[i]!);
  monitor.advanceTo(hostMs[hostMs.length - 1]! + 250);
  monitor.core.flushEdges();
  const seconds = (performance.now() - started) / 1000;
  const stateChanges = monitor.store.db.prepare('SELECT count(*) FROM state_changes').pluck().get() as number;
  const edges = monitor.store.edges.count();
  const failures = monitor.storageFailures();
  monitor.close();
  if (failures > 0) throw new Error(`storage failed ${failures} time(s) during the ingest bench`);
  if (edges === 0) throw new Error('no edges were stored: the whole path is not writing');
  return { rate: lines.length / seconds, stateChanges };
}
