import { loopSettingsFromConfig } from '../src/classify/index.js';
import type { SiteConfig } from '../src/config/schema.js';
import { parseLine } from '../src/protocol/parseLine.js';
import { indexSite, initialSiteState, stepSite } from '../src/site/siteStep.js';
import type { BenchOptions, BenchResult, BenchRow } from './benchTypes.js';
import { infoRow, shareRow } from './benchTypes.js';
import { benchSiteConfig } from './support/benchSite.js';
import { measureCpu, type CpuSpan } from './support/cpuMeter.js';
import { openDrivenMonitor, type DrivenMonitor } from './support/drivenMonitor.js';
import { median } from './support/percentile.js';
import { freezeEvents, meanWireBytes, simulatedLines } from './support/simulatedStream.js';
import { countCommits, recordSql, replaySql, type SqlOp } from './support/sqlRecorder.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * Ingest for 64 loops, every figure against ceilings measured in the same process and run:
 * - bare `parseLine` (CRC included) over the stream;
 * - a bare better-sqlite3 replay of exactly the statements the whole path ran (recorded once,
 *   each statement prepared once, same transactions and pragmas, on a twin database);
 * - the pure site step (parse, sessions, classify) and the whole path (MonitorCore on a temp SQLite
 *   file: parse, classify, alarms, edges, state changes, minute rows).
 * The headline is the whole path against "parse + bare SQL replay" in series, in CPU time, which on
 * a shared machine moves much less than wall time. Rounds alternate the four measurements.
 */

const LOOPS = 64;
const START_MS = Date.UTC(2031, 0, 6, 6, 0, 0);
const DAY_S = 86_400;
/**
 * 8N1 framing: one start bit, eight data bits, one stop bit = 10 bit times per byte (the usual UART
 * frame, e.g. TIA-232 practice), so 115200 baud carries 11 520 bytes/s.
 */
const LINK_BAUD = 115_200;
const BITS_PER_BYTE_8N1 = 10;
const SERIES_GOAL = 0.8;
const LINK_GOAL = 1000;
/** ≤ 1 % of one core, as CPU-seconds per day. */
const DAY_CPU_GOAL_S = 0.01 * DAY_S;

type Lines = ReadonlyArray<{ line: string }>;

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const durationMs = opts.smoke ? 60_000 : 900_000;
  const repeats = opts.smoke ? 1 : 5;
  const lines = simulatedLines({ loops: LOOPS, durationMs, events: freezeEvents(LOOPS, durationMs, 30_000, 10_000) });
  const hostMs = lines.map((l) => START_MS + Math.round(l.atUs / 1000));
  const bytesPerLine = meanWireBytes(lines);
  const linkLinesPerS = LINK_BAUD / BITS_PER_BYTE_8N1 / bytesPerLine;

  const folder = makeTempFolder('ingest');
  let dbCount = 0;
  const freshSite = () => siteFor(folder.path(`run-${dbCount++}.db`));
  try {
    // One unmeasured whole-path run, recording every statement it makes (and warming the JIT).
    let recorded: SqlOp[] = [];
    const recording = openDrivenMonitor(freshSite(), hostMs[0]!);
    recorded = recordSql(() => feedWholePath(recording, lines, hostMs));
    const checks = closeChecked(recording);
    const commits = countCommits(recorded);

    const spans = { parse: [] as CpuSpan[], replay: [] as CpuSpan[], site: [] as CpuSpan[], whole: [] as CpuSpan[] };
    for (let r = 0; r < repeats; r++) {
      spans.parse.push(measureCpu(() => parseAll(lines)));
      const twin = openDrivenMonitor(freshSite(), hostMs[0]!);
      spans.replay.push(measureCpu(() => replaySql(twin.store.db, recorded)));
      twin.close();
      const pure = freshSite();
      spans.site.push(measureCpu(() => siteStepAll(pure, lines, hostMs)));
      const monitor = openDrivenMonitor(freshSite(), hostMs[0]!);
      spans.whole.push(measureCpu(() => feedWholePath(monitor, lines, hostMs)));
      closeChecked(monitor);
    }
    const n = lines.length;
    const perCpuS = (list: CpuSpan[]) => median(list.map((s) => n / s.cpuS));
    const perWallS = (list: CpuSpan[]) => median(list.map((s) => n / s.wallS));
    const parse = perCpuS(spans.parse);
    const replay = perCpuS(spans.replay);
    const site = perCpuS(spans.site);
    const whole = perCpuS(spans.whole);
    // Parse and replay in series: their times per line add up.
    const seriesCpu = median(spans.parse.map((p, i) => n / (p.cpuS + spans.replay[i]!.cpuS)));
    const seriesWall = median(spans.parse.map((p, i) => n / (p.wallS + spans.replay[i]!.wallS)));
    const wholeWall = perWallS(spans.whole);
    const decoderSeconds = durationMs / 1000;
    const cpuPerDay = median(spans.whole.map((s) => s.cpuS)) * (DAY_S / decoderSeconds);
    const link = `115200-baud 8N1 link (${bytesPerLine.toFixed(1)} B/line)`;
    // Where a line's CPU goes (µs, median of the rounds): what the whole path adds to the site step and
    // the SQL is the monitor core around them, the part the 0.8× goal is about.
    const usPerLine = (list: CpuSpan[]) => median(list.map((s) => (s.cpuS / n) * 1e6));
    const aroundUs = median(spans.whole.map((w, i) => ((w.cpuS - spans.site[i]!.cpuS - spans.replay[i]!.cpuS) / n) * 1e6));
    const rows: BenchRow[] = [
      shareRow('whole path, frames per CPU-second', whole, 'frames/CPU-s', 'parse + bare SQL replay in series, per CPU-s', seriesCpu, SERIES_GOAL),
      shareRow('whole path, frames/s (wall clock)', wholeWall, 'frames/s', 'parse + bare SQL replay in series, per s', seriesWall, null),
      shareRow('whole path against the link, CPU time', whole, 'frames/CPU-s', link, linkLinesPerS, LINK_GOAL),
      shareRow('whole path against the link, wall clock', wholeWall, 'frames/s', link, linkLinesPerS, null),
      {
        figure: 'CPU per simulated day, 64 loops at the real heartbeat rate',
        value: cpuPerDay,
        unit: 'CPU-s',
        reference: 'one core for a day',
        referenceValue: DAY_S,
        ratio: cpuPerDay / DAY_S,
        target: `≤ ${DAY_CPU_GOAL_S} CPU-s (1 % of a core)`,
        met: cpuPerDay <= DAY_CPU_GOAL_S,
      },
      shareRow('bare parseLine + CRC', parse, 'frames/CPU-s', link, linkLinesPerS, null),
      shareRow('bare SQL replay of the same writes', replay, 'frames/CPU-s', link, linkLinesPerS, null),
      shareRow('pure site step (parse + sessions + classify)', site, 'frames/CPU-s', link, linkLinesPerS, null),
      infoRow('CPU per line: bare parseLine + CRC', usPerLine(spans.parse), 'µs'),
      infoRow('CPU per line: bare SQL replay', usPerLine(spans.replay), 'µs'),
      infoRow('CPU per line: pure site step', usPerLine(spans.site), 'µs'),
      infoRow('CPU per line: whole path', usPerLine(spans.whole), 'µs'),
      infoRow('CPU per line: what the whole path adds to the site step and the SQL (whole − site step − replay)', aroundUs, 'µs'),
      infoRow('commits per run', commits, 'transactions'),
      infoRow('statements per run', recorded.length, 'statements'),
      infoRow('state changes stored per run', checks.stateChanges, 'rows'),
    ];
    return {
      name: 'ingest',
      title: `Ingest, ${LOOPS} loops`,
      rows,
      notes: [
        `Stream: ${n} lines from the project's simulated decoder — ${LOOPS} loops, 1 ms pulse every 500 ms ±10 %, TICK every 200 ms, ` +
          `one loop in turn frozen for 10 s every 30 s — ${decoderSeconds} s of decoder time fed as fast as the code takes it (synthetic clock).`,
        `Whole path: MonitorCore + durable writer on a temp SQLite file (WAL, synchronous FULL), fast tick every 250 ms and minute rows on the synthetic clock, as the daemon schedules them.`,
        `Bare SQL replay: every statement the whole path ran (recorded once through better-sqlite3's Statement methods: inserts, updates, BEGIN/COMMIT, pragmas), replayed in order on a twin database with each distinct statement prepared once. "In series" adds the parse and replay CPU times per run.`,
        `Median of ${repeats} alternating round(s) (parse, replay, site step, whole path). Per CPU-second = lines ÷ CPU time (process.cpuUsage, user + system) of the section; the machine is shared, so CPU-time figures are the meaningful ones and wall-clock figures move with other load (fsync waits count in wall time only).`,
        `CPU per day: the whole path's CPU for ${decoderSeconds} s of decoder time scaled to 86 400 s; the stream is the real heartbeat rate (64 × 2 edges a second plus 5 TICKs) with more trouble than a real day.`,
        `Link rate: 115200 baud ÷ 10 bits per 8N1 byte ÷ mean line length incl. LF = ${linkLinesPerS.toFixed(0)} lines/s; the ≥ ${LINK_GOAL}× goal is for a quiet machine.`,
      ],
    };
  } finally {
    folder.remove();
  }
}

function siteFor(dbPath: string): SiteConfig {
  return benchSiteConfig({ loops: LOOPS, port: 'tcp://127.0.0.1:9', dbPath });
}

function parseAll(lines: Lines): void {
  let ok = 0;
  for (let i = 0; i < lines.length; i++) if (parseLine(lines[i]!.line).ok) ok += 1;
  if (ok !== lines.length) throw new Error(`${lines.length - ok} stream line(s) did not parse`);
}

function siteStepAll(config: SiteConfig, lines: Lines, hostMs: readonly number[]): void {
  const index = indexSite({
    loops: config.loops.map((loop) => ({ id: loop.id, decoderId: loop.decoder, input: loop.input, settings: loopSettingsFromConfig(loop) })),
    decoders: config.decoders.map((d) => ({ id: d.id, silenceMs: d.silence })),
  });
  let state = initialSiteState(index.definition, hostMs[0]!);
  let effects = 0;
  for (let i = 0; i < lines.length; i++) {
    const stepped = stepSite(index, state, { kind: 'line', decoderId: 'main', line: lines[i]!.line }, hostMs[i]!);
    state = stepped.state;
    effects += stepped.effects.length;
  }
  if (effects === 0) throw new Error('the site step produced no effects: the stream is not being decoded');
}

function feedWholePath(monitor: DrivenMonitor, lines: Lines, hostMs: readonly number[]): void {
  for (let i = 0; i < lines.length; i++) monitor.line(lines[i]!.line, hostMs[i]!);
  monitor.advanceTo(hostMs[hostMs.length - 1]! + 250);
  monitor.core.flushEdges();
}

function closeChecked(monitor: DrivenMonitor): { stateChanges: number } {
  const stateChanges = monitor.store.db.prepare('SELECT count(*) FROM state_changes').pluck().get() as number;
  const edges = monitor.store.edges.count();
  const failures = monitor.storageFailures();
  monitor.close();
  if (failures > 0) throw new Error(`storage failed ${failures} time(s) during the ingest bench`);
  if (edges === 0) throw new Error('no edges were stored: the whole path is not writing');
  return { stateChanges };
}
