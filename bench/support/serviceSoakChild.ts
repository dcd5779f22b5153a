import { readFileSync } from 'node:fs';
import { request } from 'node:http';
import pino from 'pino';
import type { SiteConfig } from '../../src/config/schema.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { installFakeClock, type FakeClock } from './fakeClock.js';

/**
 * The child process of the service soak (`serviceSoak.bench.ts`): the real daemon — `startMonitor`
 * with its web server on loopback, its serial link on a socat pseudo-terminal, mail to a drop folder,
 * its own timers, retention and daily report — on a clock the parent moves over IPC. The parent
 * writes each simulated second's decoder lines into the pty, then asks this process to move its clock;
 * this process first waits until the monitor has handled every line written so far, so host time
 * never runs ahead of lines the monitor has not read yet (a real decoder's lines are never from
 * the future either). Memory is read here, in the process under test.
 */

export type SoakRequest =
  | { kind: 'start'; config: SiteConfig; configDir: string; startMs: number; logFile: string }
  | { kind: 'advance'; to: number; linesWritten: number }
  | { kind: 'get'; path: string; token: string }
  | { kind: 'post'; path: string; token: string; body: unknown }
  /** `collect`: read after a forced garbage collection, so readings compare live memory. */
  | { kind: 'memory'; collect: boolean }
  | { kind: 'stop' };

export type SoakReply =
  | { kind: 'started'; address: string }
  | { kind: 'advanced'; linesHandled: number; timersPending: number }
  | { kind: 'response'; status: number; body: string }
  | { kind: 'memory'; rssMb: number; heapUsedMb: number; cpuS: number; rssFileMb: number | null; rssAnonMb: number | null }
  | { kind: 'stopped' }
  | { kind: 'failed'; message: string };

let clock: FakeClock | null = null;
let monitor: Monitor | null = null;
let linesHandled = 0;
const gc = (globalThis as { gc?: () => void }).gc;

process.on('message', (message: SoakRequest) => {
  void answer(message).then(
    (reply) => process.send!(reply),
    (err: unknown) => process.send!({ kind: 'failed', message: (err as Error).stack ?? String(err) } satisfies SoakReply),
  );
});

async function answer(message: SoakRequest): Promise<SoakReply> {
  switch (message.kind) {
    case 'start': {
      clock = installFakeClock(message.startMs);
      const logger = pino({ level: 'info' }, pino.destination({ dest: message.logFile, sync: true }));
      monitor = await startMonitor({ config: message.config, configDir: message.configDir, logger, now: clock.now, announce: true });
      const core = monitor.core;
      const handLine = core.line.bind(core);
      core.line = (decoderId, line, nowMs) => {
        linesHandled += 1;
        handLine(decoderId, line, nowMs);
      };
      if (!monitor.address) throw new Error('the monitor did not report a web address');
      return { kind: 'started', address: monitor.address };
    }
    case 'advance': {
      const c = clock!;
      // Real time bounds the wait only as a failure: a monitor that stopped reading is an error, not a figure.
      const deadline = performance.now() + 30_000;
      while (linesHandled < message.linesWritten) {
        if (performance.now() > deadline) throw new Error(`the monitor handled ${linesHandled} of ${message.linesWritten} lines written and then stopped reading`);
        await new Promise((resolve) => c.real.setImmediate(resolve));
      }
      await c.advanceTo(message.to);
      return { kind: 'advanced', linesHandled, timersPending: c.pending() };
    }
    case 'get':
    case 'post':
      return httpCall(message.kind === 'get' ? 'GET' : 'POST', message.path, message.token, message.kind === 'post' ? message.body : undefined);
    case 'memory': {
      if (message.collect) gc?.();
      const m = process.memoryUsage();
      const cpu = process.cpuUsage();
      if (process.env.PW_BENCH_TRACE_MEMORY) {
        const mb = (n: number) => (n / 2 ** 20).toFixed(1);
        process.stderr.write(`service soak at ${new Date(clock!.now()).toISOString()}: rss ${mb(m.rss)} heapTotal ${mb(m.heapTotal)} heapUsed ${mb(m.heapUsed)} external ${mb(m.external)} arrayBuffers ${mb(m.arrayBuffers)} MB\n`);
        if (message.collect) process.stderr.write(`${mappingsByKind()}\n`);
      }
      const split = rssSplit();
      return { kind: 'memory', rssMb: m.rss / 2 ** 20, heapUsedMb: m.heapUsed / 2 ** 20, cpuS: (cpu.user + cpu.system) / 1e6, ...split };
    }
    case 'stop': {
      // stop() races the last mail round against a timer on the monitor's clock; move the clock so it can end.
      const stopping = monitor!.stop('soak over');
      for (let i = 0; i < 100; i++) {
        const done = await Promise.race([stopping.then(() => true), new Promise<boolean>((r) => clock!.real.setTimeout(() => r(false), 20))]);
        if (done) break;
        await clock!.advanceTo(clock!.now() + 100);
      }
      await stopping;
      return { kind: 'stopped' };
    }
  }
}

/** node:http rather than fetch: its timeouts are Node's internal timers, untouched by the fake clock. */
function httpCall(method: 'GET' | 'POST', path: string, token: string, body: unknown): Promise<SoakReply> {
  const url = new URL(path, monitor!.address!);
  const payload = body === undefined ? undefined : JSON.stringify(body);
  return new Promise((resolve, reject) => {
    const req = request(
      url,
      {
        method,
        headers: {
          authorization: `Bearer ${token}`,
          ...(payload === undefined ? {} : { 'content-type': 'application/json', 'content-length': Buffer.byteLength(payload) }),
        },
      },
      (res) => {
        const chunks: Buffer[] = [];
        res.on('data', (chunk: Buffer) => chunks.push(chunk));
        res.on('end', () => resolve({ kind: 'response', status: res.statusCode ?? 0, body: Buffer.concat(chunks).toString('utf8') }));
        res.on('error', reject);
      },
    );
    req.on('error', reject);
    req.end(payload);
  });
}

/**
 * RSS split into file-backed pages (mostly the node binary's own code and data, shared and clean, which
 * the kernel can drop and reread) and anonymous memory (heaps, stacks, allocations): proc(5),
 * /proc/[pid]/status RssFile and RssAnon, in kB. Null where the kernel does not report them.
 */
function rssSplit(): { rssFileMb: number | null; rssAnonMb: number | null } {
  try {
    const status = readFileSync('/proc/self/status', 'utf8');
    const kb = (key: string) => {
      const found = new RegExp(`^${key}:\\s+(\\d+) kB`, 'm').exec(status);
      return found ? Number(found[1]) / 1024 : null;
    };
    return { rssFileMb: kb('RssFile'), rssAnonMb: kb('RssAnon') };
  } catch {
    return { rssFileMb: null, rssAnonMb: null };
  }
}

/**
 * Resident kB by kind of mapping, from /proc/self/smaps (proc(5)): each file by name, the V8 heap's
 * and other anonymous mappings by size class, [heap] (brk), stacks. For the trace only.
 */
function mappingsByKind(): string {
  let text: string;
  try {
    text = readFileSync('/proc/self/smaps', 'utf8');
  } catch {
    return 'smaps: not readable';
  }
  const sums = new Map<string, { rss: number; count: number }>();
  let kind = '';
  for (const line of text.split('\n')) {
    const head = /^([0-9a-f]+)-([0-9a-f]+) \S+ \S+ \S+ \S+\s*(.*)$/.exec(line);
    if (head) {
      const size = (parseInt(head[2]!, 16) - parseInt(head[1]!, 16)) / 1024;
      const name = head[3]!;
      kind = name !== '' ? name.replace(/^.*node_modules\//, 'nm:') : size >= 65536 ? 'anon >= 64 MiB' : size >= 8192 ? 'anon 8-64 MiB' : size >= 1024 ? 'anon 1-8 MiB' : size > 128 ? 'anon 128 KiB-1 MiB' : 'anon <= 128 KiB';
      const entry = sums.get(kind) ?? { rss: 0, count: 0 };
      entry.count += 1;
      sums.set(kind, entry);
      continue;
    }
    const rss = /^Rss:\s+(\d+) kB/.exec(line);
    if (rss && kind) sums.get(kind)!.rss += Number(rss[1]);
  }
  return [...sums.entries()]
    .filter(([, v]) => v.rss >= 256)
    .sort((a, b) => b[1].rss - a[1].rss)
    .map(([k, v]) => `  ${(v.rss / 1024).toFixed(1).padStart(6)} MB  ${String(v.count).padStart(3)}×  ${k}`)
    .join('\n');
}
