import type { AddressInfo } from 'node:net';
import Fastify from 'fastify';
import { startMonitor, type Monitor } from '../src/daemon/startMonitor.js';
import type { BenchOptions, BenchResult, BenchRow } from './benchTypes.js';
import { ceilingRow, infoRow, shareRow } from './benchTypes.js';
import { grantApiToken } from './support/apiToken.js';
import { runAutocannon, type LoadResult } from './support/autocannonChild.js';
import { BenchError } from './support/benchError.js';
import { benchSiteConfig } from './support/benchSite.js';
import { startCpuSpan } from './support/cpuMeter.js';
import { createFrameMaker, type FrameMaker } from './support/frameMaker.js';
import { median } from './support/percentile.js';
import { silentLogger } from './support/silentLogger.js';
import { startSilentDecoderPort } from './support/silentDecoderPort.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * GET /api/v1/loops (64 loops) and GET /api/v1/alarms under load from autocannon in a second
 * process, beside two ceilings served by a bare fastify in the same process and run: a route
 * returning a constant, and a route returning the very bytes of a /loops response precomputed.
 * Targets alternate round by round. The headline is requests per CPU-second of this process (the
 * server; autocannon runs elsewhere), because on a shared machine wall-clock throughput moves with
 * other people's load while CPU time per request moves much less.
 *
 * While the load runs, the healthy loops keep pulsing at the real heartbeat rate (every 500 ms),
 * so the board changes about 128 times a second, as it does on a real site, and a response cache
 * cannot live off a frozen board. That feed's own CPU is measured with no load and taken out.
 */

const LOOPS = 64;
const CONNECTIONS = 10;
const LOOPS_GOAL = 0.5;
const ALARMS_GOAL = 0.6;
const P99_GOAL_MS = 2;
const PERIOD_US = 500_000;
const TICK_US = 200_000;
const TRIPPED = [61, 64];
const OPEN = 62;
const SHORTED = 63;

interface Measured {
  load: LoadResult;
  cpuS: number;
  wallS: number;
}

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const rounds = opts.smoke ? 1 : 3;
  const seconds = opts.smoke ? 1 : 4;
  const folder = makeTempFolder('api');
  const decoderPort = await startSilentDecoderPort();
  const ceiling = Fastify({ logger: false });
  let loopsBytes = '';
  ceiling.get('/constant', async () => ({ ok: true }));
  ceiling.get('/bytes', async (_request, reply) => reply.type('application/json; charset=utf-8').send(loopsBytes));
  let monitor: Monitor | null = null;
  let feed: { stop(): void } | null = null;
  try {
    // Silence of an hour: the board keeps the states fed below for the whole run.
    const config = benchSiteConfig({ loops: LOOPS, port: decoderPort.url, dbPath: folder.path('site.db'), silence: '10m' });
    const token = grantApiToken(config.storage.path, Date.now());
    monitor = await startMonitor({ config, configDir: folder.dir, logger: silentLogger(), announce: false });
    if (!monitor.address) throw new BenchError('PW_BENCH_NO_ADDRESS', 'the monitor did not report a web address');
    const frames = createFrameMaker();
    const board = populateBoard(monitor, frames);
    feed = startHeartbeats(monitor, frames, board);
    await ceiling.listen({ host: '127.0.0.1', port: 0 });
    const ceilingBase = `http://127.0.0.1:${(ceiling.server.address() as AddressInfo).port}`;
    const headers = { authorization: `Bearer ${token}` };
    const urls = {
      loops: `${monitor.address}/api/v1/loops`,
      alarms: `${monitor.address}/api/v1/alarms`,
      constant: `${ceilingBase}/constant`,
      bytes: `${ceilingBase}/bytes`,
    };

    const check = await fetch(urls.loops, { headers });
    loopsBytes = await check.text();
    const body = JSON.parse(loopsBytes) as unknown[];
    if (check.status !== 200 || !Array.isArray(body) || body.length !== LOOPS) {
      throw new BenchError('PW_BENCH_API', `GET /api/v1/loops answered ${check.status} with ${Array.isArray(body) ? body.length : 'no'} loops`);
    }
    const alarmsCheck = await fetch(urls.alarms, { headers });
    const alarmsBytes = (await alarmsCheck.text()).length;
    if (alarmsCheck.status !== 200) throw new BenchError('PW_BENCH_API', `GET /api/v1/alarms answered ${alarmsCheck.status}`);

    const targets = ['loops', 'alarms', 'constant', 'bytes'] as const;
    type Target = (typeof targets)[number];
    const measure = async (target: Target, s: number): Promise<Measured> => {
      const stop = startCpuSpan();
      const load = await runAutocannon(urls[target], { connections: CONNECTIONS, seconds: s, ...(target === 'loops' || target === 'alarms' ? { headers } : {}) });
      return { load, ...stop() };
    };
    if (!opts.smoke) for (const target of targets) await measure(target, 1);
    // The heartbeat feed and the server's idle timers, with no load: taken out of every round pro rata.
    const idle = startCpuSpan();
    await new Promise((r) => setTimeout(r, opts.smoke ? 500 : 2000));
    const idleSpan = idle();
    const backgroundCpuPerS = idleSpan.cpuS / idleSpan.wallS;

    const runs: Record<Target, Measured[]> = { loops: [], alarms: [], constant: [], bytes: [] };
    for (let r = 0; r < rounds; r++) {
      // Alternate the order too, so no target always follows the same one.
      const order = r % 2 === 0 ? targets : [...targets].reverse();
      for (const target of order) runs[target].push(await measure(target, seconds));
    }
    for (const target of ['loops', 'alarms'] as const) {
      const bad = runs[target].reduce((n, m) => n + m.load.non2xx + m.load.errors, 0);
      if (bad > 0) throw new BenchError('PW_BENCH_API', `${bad} request(s) to /api/v1/${target} failed or were refused under load`);
    }
    const perCpuS = (m: Measured) => m.load.total / Math.max(1e-6, m.cpuS - backgroundCpuPerS * m.wallS);
    const fig = (target: Target) => ({
      perCpuS: median(runs[target].map(perCpuS)),
      perS: median(runs[target].map((m) => m.load.requestsPerS)),
      p50: median(runs[target].map((m) => m.load.p50Ms)),
      p99: median(runs[target].map((m) => m.load.p99Ms)),
    });
    const loops = fig('loops');
    const alarms = fig('alarms');
    const constant = fig('constant');
    const bytes = fig('bytes');
    const usPer = (perCpuS: number) => 1e6 / perCpuS;
    const rows: BenchRow[] = [
      shareRow('/loops requests per CPU-second', loops.perCpuS, 'req/CPU-s', 'constant route, req/CPU-s', constant.perCpuS, LOOPS_GOAL),
      shareRow('/alarms requests per CPU-second', alarms.perCpuS, 'req/CPU-s', 'constant route, req/CPU-s', constant.perCpuS, ALARMS_GOAL),
      shareRow('same /loops bytes precomputed (the ceiling for /loops)', bytes.perCpuS, 'req/CPU-s', 'constant route, req/CPU-s', constant.perCpuS, null),
      infoRow('/loops CPU per request', usPer(loops.perCpuS), 'µs'),
      infoRow('/alarms CPU per request', usPer(alarms.perCpuS), 'µs'),
      infoRow('constant route CPU per request', usPer(constant.perCpuS), 'µs'),
      shareRow('/loops requests/s (wall clock)', loops.perS, 'req/s', 'constant route, req/s', constant.perS, null),
      shareRow('/alarms requests/s (wall clock)', alarms.perS, 'req/s', 'constant route, req/s', constant.perS, null),
      ceilingRow('/loops latency p99', loops.p99, P99_GOAL_MS, true),
      ceilingRow('/alarms latency p99', alarms.p99, P99_GOAL_MS, true),
      infoRow('/loops latency p50', loops.p50, 'ms'),
      infoRow('response size /loops', loopsBytes.length, 'bytes'),
      infoRow('response size /alarms', alarmsBytes, 'bytes'),
    ];
    return {
      name: 'api',
      title: `API: GET /api/v1/loops (${LOOPS} loops) and /api/v1/alarms, under load`,
      rows,
      notes: [
        `autocannon ${CONNECTIONS} connections, ${rounds} round(s) of ${seconds} s per target, alternating (medians shown)${opts.smoke ? '' : ', after 1 s of warm-up each'}; server in the bench process, autocannon in a child process, 127.0.0.1 only.`,
        `Requests per CPU-second: requests served ÷ CPU time (user + system, process.cpuUsage) of the server process during the round, less the background CPU measured with no load (${(backgroundCpuPerS * 100).toFixed(1)} % of a core: the heartbeat feed and timers). This is the headline because the machine is shared: wall-clock req/s and latency move with other processes' load, CPU time per request much less.`,
        `Ceilings, same process and run: a bare fastify route returning {"ok":true}, and one returning the ${loopsBytes.length} bytes of a /loops response as a precomputed string (what /loops would cost if building the body were free).`,
        `Board: ${LOOPS} loops, mostly healthy, two tripped, one open, one shorted, with their alarms; the healthy loops keep pulsing every ${PERIOD_US / 1000} ms during the load (about ${Math.round(((LOOPS - 4) * 1e6) / PERIOD_US)} pulses, so board changes, a second). Requests authenticated with a viewer API token (Bearer).`,
        `Latency: autocannon's p99 in whole milliseconds, at ${CONNECTIONS} connections.`,
      ],
    };
  } finally {
    feed?.stop();
    await monitor?.stop('benchmark finished', 3000).catch(() => undefined);
    await ceiling.close();
    await decoderPort.close();
    folder.remove();
  }
}

interface Board {
  bands: string[];
  /** Decoder time of the last line fed, µs. */
  lastUs: number;
}

/**
 * A realistic board — mostly healthy, two loops tripped, one open, one shorted, with their alarms —
 * made by feeding 4 s of decoder lines straight into the core, in time order.
 */
function populateBoard(monitor: Monitor, frames: FrameMaker): Board {
  // Host time runs with decoder time (ending now): the monitor refuses decoder time that runs ahead of the host clock.
  const hostAtZeroUs = Date.now() - 4_300;
  const feed = (line: string, atUs = 0) => monitor.core.line('main', line, hostAtZeroUs + atUs / 1000);
  type Item = { atUs: number; input: number; band: 'O' | 'N' | 'H' | null };
  const items: Item[] = [];
  for (let input = 1; input <= LOOPS; input++) {
    const faulty = TRIPPED.includes(input) || input === OPEN || input === SHORTED;
    for (let k = 0; k < (faulty ? 4 : 8); k++) {
      const at = 100_000 + k * PERIOD_US + input * 1000;
      items.push({ atUs: at, input, band: 'H' }, { atUs: at + 500, input, band: 'N' });
    }
  }
  items.push({ atUs: 2_150_000 + OPEN * 1000, input: OPEN, band: 'O' }, { atUs: 2_150_000 + SHORTED * 1000, input: SHORTED, band: 'H' });
  for (let t = 250_000; t <= 4_250_000; t += 250_000) items.push({ atUs: t, input: 0, band: null });
  items.sort((a, b) => a.atUs - b.atUs);
  const bands = Array.from({ length: LOOPS }, () => 'N');
  feed(frames.hello(LOOPS));
  feed(frames.tick(0, bands.join('')));
  for (const item of items) {
    if (item.band === null) feed(frames.tick(item.atUs, bands.join('')), item.atUs);
    else {
      bands[item.input - 1] = item.band;
      feed(frames.edge(item.atUs, item.input, item.band), item.atUs);
    }
  }
  const states = new Set(monitor.core.openAlarms().map((a) => a.condition));
  if (!states.has('tripped') || !states.has('open') || !states.has('shorted')) {
    throw new BenchError('PW_BENCH_BOARD', `the board did not get its faults (alarms: ${[...states].join(', ') || 'none'})`);
  }
  return { bands, lastUs: 4_250_000 };
}

/**
 * The healthy loops go on pulsing in real time (decoder time = wall time), 1 ms pulses every 500 ms,
 * with a TICK every 200 ms. A pulse is sent only once both its edges are due, so decoder time never
 * steps back between batches (no TICK falls inside a pulse: TICKs are on 100 ms boundaries, pulses
 * 1–65 ms past them).
 */
function startHeartbeats(monitor: Monitor, frames: FrameMaker, board: Board): { stop(): void } {
  const faulty = new Set([...TRIPPED, OPEN, SHORTED]);
  const startedMs = Date.now();
  const baseUs = Math.ceil((board.lastUs + 1) / PERIOD_US) * PERIOD_US;
  const nextPulse = Array.from({ length: LOOPS + 1 }, (_, input) => baseUs + input * 1000);
  let nextTick = Math.ceil((board.lastUs + 1) / TICK_US) * TICK_US;
  const timer = setInterval(() => {
    const nowUs = board.lastUs + (Date.now() - startedMs) * 1000;
    const lines: Array<{ atUs: number; line: () => string }> = [];
    for (let input = 1; input <= LOOPS; input++) {
      if (faulty.has(input)) continue;
      for (; nextPulse[input]! + 1000 <= nowUs; nextPulse[input]! += PERIOD_US) {
        const at = nextPulse[input]!;
        lines.push({ atUs: at, line: () => frames.edge(at, input, 'H') }, { atUs: at + 1000, line: () => frames.edge(at + 1000, input, 'N') });
      }
    }
    for (; nextTick <= nowUs; nextTick += TICK_US) {
      const at = nextTick;
      lines.push({ atUs: at, line: () => frames.tick(at, board.bands.join('')) });
    }
    // Stable sort: at one instant an N comes before the next loop's H and before a TICK, as sent.
    lines.sort((a, b) => a.atUs - b.atUs);
    const host = Date.now();
    // Sequence numbers are handed out in time order, as a decoder would.
    for (const item of lines) monitor.core.line('main', item.line(), host);
  }, 20);
  return { stop: () => clearInterval(timer) };
}
