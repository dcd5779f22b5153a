import { performance } from 'node:perf_hooks';
import { startMonitor, type Monitor } from '../src/daemon/startMonitor.js';
import type { BenchOptions, BenchResult } from './benchTypes.js';
import { ceilingRow, infoRow } from './benchTypes.js';
import { grantApiToken } from './support/apiToken.js';
import { BenchError } from './support/benchError.js';
import { benchSiteConfig } from './support/benchSite.js';
import { createFrameMaker } from './support/frameMaker.js';
import { percentile } from './support/percentile.js';
import { silentLogger } from './support/silentLogger.js';
import { openPtyPair } from './support/socatPty.js';
import { makeTempFolder } from './support/tempFolder.js';
import { transitionScript, type ExpectedTransition } from './support/transitionScript.js';

/**
 * Detection latency end to end: protocol lines written in real time into a socat pseudo-terminal, read
 * by the real monitor through serialport, the state polled on GET /api/v1/loops. The figure is how
 * long after a state's confirmation window ran out (decoder time mapped to wall time) the API shows it.
 */

const TARGET_P99_MS = 50;
/** TICK spacing of the played decoder. The protocol allows up to 250 ms; see the notes. */
const TICK_US = 20_000;
const POLL_GAP_MS = 2;
const LOOP_STAGGER_US = 61_000;

interface Tracked extends ExpectedTransition {
  decidedWrittenMs: number | null;
  visibleMs: number | null;
}

type TimelineItem = { atUs: number; input: number; band: 'O' | 'N' | 'H' } | { atUs: number; input: 0; band: null };

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const loops = opts.smoke ? 2 : 64;
  const cycles = 1;
  const folder = makeTempFolder('detection');
  const pty = await openPtyPair(folder.dir);
  let monitor: Monitor | null = null;
  // Set on the way out, so a pending write never hits the closed pseudo-terminal.
  let finished = false;
  try {
    const config = benchSiteConfig({ loops, port: pty.devicePath, dbPath: folder.path('site.db') });
    const token = grantApiToken(config.storage.path, Date.now());
    monitor = await startMonitor({ config, configDir: folder.dir, logger: silentLogger(), announce: false });
    await waitUntil(() => monitor!.core.linkOf('main')?.state === 'connected', 10_000, 'the monitor to open the pseudo-terminal');
    const address = monitor.address;
    if (!address) throw new BenchError('PW_BENCH_NO_ADDRESS', 'the monitor did not report a web address');

    // The script for every loop, merged into one time-ordered wire timeline with a TICK every TICK_US.
    const tracked: Tracked[] = [];
    const items: TimelineItem[] = [];
    for (let input = 1; input <= loops; input++) {
      const script = transitionScript(input, 100_000 + (input - 1) * LOOP_STAGGER_US, cycles);
      items.push(...script.edges);
      for (const e of script.expected) tracked.push({ ...e, decidedWrittenMs: null, visibleMs: null });
    }
    const lastUs = Math.max(...items.map((i) => i.atUs)) + 500_000;
    for (let t = TICK_US; t <= lastUs; t += TICK_US) items.push({ atUs: t, input: 0, band: null });
    // Edges before a TICK of the same instant, as a decoder sends them.
    items.sort((a, b) => a.atUs - b.atUs || (a.band === null ? 1 : 0) - (b.band === null ? 1 : 0));
    const byLoop = new Map<number, Tracked[]>();
    for (const t of tracked) byLoop.set(t.input, [...(byLoop.get(t.input) ?? []), t]);
    const toDecide = new Map([...byLoop].map(([input, list]) => [input, [...list].sort((a, b) => a.windowEndUs - b.windowEndUs)]));
    const toSee = new Map([...byLoop].map(([input, list]) => [input, [...list].sort((a, b) => a.windowEndUs - b.windowEndUs)]));

    const frames = createFrameMaker();
    const bands = Array.from({ length: loops }, () => 'N');
    pty.write(`${frames.hello(loops)}\n${frames.tick(0, bands.join(''))}\n`);
    const t0 = performance.now();
    const wallOf = (us: number) => t0 + us / 1000;

    const writing = new Promise<void>((resolve) => {
      let next = 0;
      const pump = () => {
        if (finished) return resolve();
        const nowUs = (performance.now() - t0) * 1000;
        let text = '';
        const decided: Tracked[] = [];
        const markDecided = (input: number, atUs: number) => {
          const queue = toDecide.get(input);
          while (queue && queue.length > 0 && queue[0]!.windowEndUs <= atUs) decided.push(queue.shift()!);
        };
        while (next < items.length && items[next]!.atUs <= nowUs) {
          const item = items[next++]!;
          if (item.band === null) {
            text += `${frames.tick(item.atUs, bands.join(''))}\n`;
            for (let input = 1; input <= loops; input++) markDecided(input, item.atUs);
          } else {
            bands[item.input - 1] = item.band;
            text += `${frames.edge(item.atUs, item.input, item.band)}\n`;
            markDecided(item.input, item.atUs);
          }
        }
        if (text) {
          pty.write(text);
          const writtenMs = performance.now();
          for (const d of decided) d.decidedWrittenMs = writtenMs;
        }
        if (next >= items.length) return resolve();
        setTimeout(pump, Math.max(0, (items[next]!.atUs - (performance.now() - t0) * 1000) / 1000));
      };
      pump();
    });

    const authorization = `Bearer ${token}`;
    const deadline = wallOf(lastUs) + 5_000;
    let polls = 0;
    const polling = (async () => {
      while (performance.now() < deadline && [...toSee.values()].some((q) => q.length > 0)) {
        const response = await fetch(`${address}/api/v1/loops`, { headers: { authorization } });
        if (response.status !== 200) throw new BenchError('PW_BENCH_API', `GET /api/v1/loops answered ${response.status}: ${await response.text()}`);
        const body = (await response.json()) as Array<{ id: string; state: string }>;
        const seenAt = performance.now();
        polls += 1;
        for (const loop of body) {
          const input = Number(loop.id.slice(loop.id.lastIndexOf('-') + 1));
          const queue = toSee.get(input);
          if (queue && queue.length > 0 && queue[0]!.state === loop.state) queue.shift()!.visibleMs = seenAt;
        }
        await new Promise((r) => setTimeout(r, POLL_GAP_MS));
      }
    })();
    await Promise.all([writing, polling]);

    const seen = tracked.filter((t) => t.visibleMs !== null);
    const beyond = seen.map((t) => t.visibleMs! - wallOf(t.windowEndUs));
    const monitorLatency = seen.filter((t) => t.decidedWrittenMs !== null).map((t) => t.visibleMs! - t.decidedWrittenMs!);
    const perState = ['healthy', 'tripped', 'open', 'shorted'].map((state) => {
      const list = seen.filter((t) => t.state === state).map((t) => t.visibleMs! - wallOf(t.windowEndUs));
      return `${state} p99 ${percentile(list, 99).toFixed(1)} ms (n=${list.length})`;
    });
    const p99 = percentile(beyond, 99);
    const missed = tracked.length - seen.length;
    return {
      name: 'detection',
      title: 'Detection: pseudo-terminal → serialport → state on GET /api/v1/loops',
      rows: [
        infoRow('time beyond confirmation window, p50', percentile(beyond, 50), 'ms'),
        ceilingRow('time beyond confirmation window, p99', p99, TARGET_P99_MS, missed === 0),
        infoRow('deciding frame written → visible on the API, p99', percentile(monitorLatency, 99), 'ms'),
        infoRow('transitions measured', seen.length, 'transitions'),
        ...(missed > 0 ? [infoRow('transitions never seen on the API', missed, 'transitions')] : []),
      ],
      notes: [
        `${loops} loop(s) each scripted through unknown→healthy, then healthy→tripped→healthy→open→healthy→shorted→healthy (${cycles} cycle), starts staggered by ${LOOP_STAGGER_US / 1000} ms; lines written in real time into a socat pty, decoder time = wall time since HELLO.`,
        `Windows from the protocol defaults: trip 1500 ms after the last pulse, open/short 200 ms, healthy at the 3rd pulse in rhythm. Per state: ${perState.join('; ')}.`,
        `The played decoder sends TICK every ${TICK_US / 1000} ms. A fault is only confirmable on the first frame past its window, so a decoder at the protocol's slowest TICK (250 ms) adds up to 250 ms to open/short/tripped; the "deciding frame written → visible" row is the monitor's own share.`,
        `Polled every ~${POLL_GAP_MS} ms after each response (${polls} polls); "visible" is when the response arrived. Writer, monitor and poller share one Node process.`,
      ],
    };
  } finally {
    finished = true;
    await monitor?.stop('benchmark finished', 3000).catch(() => undefined);
    await pty.close();
    folder.remove();
  }
}

async function waitUntil(check: () => boolean, timeoutMs: number, what: string): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!check()) {
    if (Date.now() > deadline) throw new BenchError('PW_BENCH_TIMEOUT', `timed out waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 10));
  }
}
