import type { AddressInfo } from 'node:net';
import Fastify from 'fastify';
import { startMonitor, type Monitor } from '../src/daemon/startMonitor.js';
import type { BenchOptions, BenchResult, BenchRow } from './benchTypes.js';
import { grantApiToken } from './support/apiToken.js';
import { runAutocannon, type LoadResult } from './support/autocannonChild.js';
import { BenchError } from './support/benchError.js';
import { benchSiteConfig } from './support/benchSite.js';
import { createFrameMaker } from './support/frameMaker.js';
import { silentLogger } from './support/silentLogger.js';
import { startSilentDecoderPort } from './support/silentDecoderPort.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * GET /api/v1/loops for 64 loops under load from autocannon in a second process, beside a bare
 * fastify route returning a constant, in the same run and alternating, so the ratio is the price of
 * the monitor's route (auth, read model, serialisation) on this machine.
 */

const LOOPS = 64;
const CONNECTIONS = 10;

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const rounds = opts.smoke ? 1 : 2;
  const seconds = opts.smoke ? 1 : 5;
  const folder = makeTempFolder('api');
  const decoderPort = await startSilentDecoderPort();
  const constant = Fastify({ logger: false });
  constant.get('/constant', async () => ({ ok: true }));
  let monitor: Monitor | null = null;
  try {
    // Silence of an hour: the board keeps the states fed below for the whole run.
    const config = benchSiteConfig({ loops: LOOPS, port: decoderPort.url, dbPath: folder.path('site.db'), silence: '1h' });
    const token = grantApiToken(config.storage.path, Date.now());
    monitor = await startMonitor({ config, configDir: folder.dir, logger: silentLogger(), announce: false });
    if (!monitor.address) throw new BenchError('PW_BENCH_NO_ADDRESS', 'the monitor did not report a web address');
    populateBoard(monitor);
    await constant.listen({ host: '127.0.0.1', port: 0 });
    const constantUrl = `http://127.0.0.1:${(constant.server.address() as AddressInfo).port}/constant`;
    const loopsUrl = `${monitor.address}/api/v1/loops`;
    const headers = { authorization: `Bearer ${token}` };

    const check = await fetch(loopsUrl, { headers });
    const body = (await check.json()) as unknown[];
    if (check.status !== 200 || !Array.isArray(body) || body.length !== LOOPS) {
      throw new BenchError('PW_BENCH_API', `GET /api/v1/loops answered ${check.status} with ${Array.isArray(body) ? body.length : 'no'} loops`);
    }
    if (!opts.smoke) {
      await runAutocannon(loopsUrl, { connections: CONNECTIONS, seconds: 1, headers });
      await runAutocannon(constantUrl, { connections: CONNECTIONS, seconds: 1 });
    }
    const loopRuns: LoadResult[] = [];
    const constantRuns: LoadResult[] = [];
    for (let r = 0; r < rounds; r++) {
      loopRuns.push(await runAutocannon(loopsUrl, { connections: CONNECTIONS, seconds, headers }));
      constantRuns.push(await runAutocannon(constantUrl, { connections: CONNECTIONS, seconds }));
    }
    const bad = loopRuns.reduce((n, r) => n + r.non2xx + r.errors, 0);
    if (bad > 0) throw new BenchError('PW_BENCH_API', `${bad} request(s) to /api/v1/loops failed or were refused under load`);
    const loops = average(loopRuns);
    const base = average(constantRuns);
    const row = (figure: string, value: number, referenceValue: number, unit: string): BenchRow => ({
      figure,
      value,
      unit,
      reference: 'fastify route returning a constant',
      referenceValue,
      // autocannon reports whole milliseconds: a 0 ms reference has no meaningful ratio.
      ratio: referenceValue > 0 ? value / referenceValue : null,
      target: null,
      met: null,
    });
    return {
      name: 'api',
      title: `API: GET /api/v1/loops, ${LOOPS} loops, under load`,
      rows: [
        row('requests/s', loops.requestsPerS, base.requestsPerS, 'req/s'),
        row('latency p50', loops.p50Ms, base.p50Ms, 'ms'),
        row('latency p99', loops.p99Ms, base.p99Ms, 'ms'),
        { figure: 'response size', value: JSON.stringify(body).length, unit: 'bytes', reference: null, referenceValue: null, ratio: null, target: null, met: null },
      ],
      notes: [
        `autocannon ${CONNECTIONS} connections, ${rounds} round(s) of ${seconds} s per target, alternating (averages shown)${opts.smoke ? '' : ', after 1 s of warm-up each'}; server in the bench process, autocannon in a child process, 127.0.0.1 only.`,
        `Board: ${LOOPS} loops, mostly healthy, with tripped, open and shorted loops and their alarms; requests authenticated with a viewer API token (Bearer).`,
      ],
    };
  } finally {
    await monitor?.stop('benchmark finished', 3000).catch(() => undefined);
    await constant.close();
    await decoderPort.close();
    folder.remove();
  }
}

/**
 * A realistic board — mostly healthy, two loops tripped, one open, one shorted, with their alarms —
 * made by feeding 4 s of decoder lines straight into the core, in time order.
 */
function populateBoard(monitor: Monitor): void {
  const frames = createFrameMaker();
  const feed = (line: string) => monitor.core.line('main', line, Date.now());
  const tripped = [61, 64];
  const open = 62;
  const shorted = 63;
  type Item = { atUs: number; input: number; band: 'O' | 'N' | 'H' | null };
  const items: Item[] = [];
  for (let input = 1; input <= LOOPS; input++) {
    const faulty = tripped.includes(input) || input === open || input === shorted;
    for (let k = 0; k < (faulty ? 4 : 8); k++) {
      const at = 100_000 + k * 500_000 + input * 1000;
      items.push({ atUs: at, input, band: 'H' }, { atUs: at + 500, input, band: 'N' });
    }
  }
  items.push({ atUs: 2_150_000 + open * 1000, input: open, band: 'O' }, { atUs: 2_150_000 + shorted * 1000, input: shorted, band: 'H' });
  for (let t = 250_000; t <= 4_250_000; t += 250_000) items.push({ atUs: t, input: 0, band: null });
  items.sort((a, b) => a.atUs - b.atUs);
  const bands = Array.from({ length: LOOPS }, () => 'N');
  feed(frames.hello(LOOPS));
  feed(frames.tick(0, bands.join('')));
  for (const item of items) {
    if (item.band === null) feed(frames.tick(item.atUs, bands.join('')));
    else {
      bands[item.input - 1] = item.band;
      feed(frames.edge(item.atUs, item.input, item.band));
    }
  }
  const states = new Set(monitor.core.openAlarms().map((a) => a.condition));
  if (!states.has('tripped') || !states.has('open') || !states.has('shorted')) {
    throw new BenchError('PW_BENCH_BOARD', `the board did not get its faults (alarms: ${[...states].join(', ') || 'none'})`);
  }
}

function average(runs: readonly LoadResult[]): LoadResult {
  const mean = (pick: (r: LoadResult) => number) => runs.reduce((s, r) => s + pick(r), 0) / runs.length;
  return { requestsPerS: mean((r) => r.requestsPerS), p50Ms: mean((r) => r.p50Ms), p99Ms: mean((r) => r.p99Ms), total: mean((r) => r.total), non2xx: 0, errors: 0 };
}
