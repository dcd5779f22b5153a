import { fork, type ChildProcess } from 'node:child_process';
import { existsSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import { performance } from 'node:perf_hooks';
import { findPackageRoot } from '../src/store/openDatabase.js';
import type { BenchOptions, BenchResult, BenchRow } from './benchTypes.js';
import { infoRow } from './benchTypes.js';
import { dailyTrouble } from './soak.bench.js';
import { grantApiToken } from './support/apiToken.js';
import { BenchError } from './support/benchError.js';
import { benchSiteConfig } from './support/benchSite.js';
import type { SoakReply, SoakRequest } from './support/serviceSoakChild.js';
import { openSimulatedDecoder } from './support/simulatedStream.js';
import { openPtyPair } from './support/socatPty.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * Service soak: the real daemon (web server, serial link on a pseudo-terminal, mail to a drop folder,
 * its own timers, retention at midnight and the daily report) fed at the real heartbeat rate — every
 * node pulsing 1 ms every 500 ms — for simulated days, on a clock this process moves (see
 * support/fakeClock.ts). The daemon runs in a child process so its memory is its own; it is run once
 * with the systemd unit's Node flags and once with Node's defaults. The API is polled every ten
 * simulated minutes, and each midnight an operator acknowledges the day's alarms through it.
 *
 * The reduced-rate 30-day soak (soak.bench.ts) stays: it covers retention over a month; this one
 * covers the real service, at the real line rate, over days.
 */

const LOOPS = 32;
const DAY_MS = 86_400_000;
const STEP_MS = 1000;
const POLL_EVERY_MS = 600_000;
const START_MS = Date.UTC(2031, 2, 3, 0, 0, 0);
const GOAL_UNIT_MB = 100;
const GOAL_DEFAULT_MB = 120;
const FLAT_GROWTH = 0.1;

export async function run(opts: BenchOptions): Promise<BenchResult> {
  // Smoke: ten simulated minutes with the unit's flags only, to prove the harness works.
  // PW_BENCH_SOAK_HOURS: a shorter (or longer) full run, both variants, for measuring a change.
  const hours = Number(process.env.PW_BENCH_SOAK_HOURS ?? '');
  const durationMs = opts.smoke ? 600_000 : hours > 0 ? hours * 3_600_000 : 2 * DAY_MS;
  const unit = unitRuntime();
  const asUnit = { label: "the unit's flags", flags: unit.flags, env: unit.env, goalMb: GOAL_UNIT_MB };
  const asDefaults = { label: "Node's defaults", flags: [], env: {}, goalMb: GOAL_DEFAULT_MB };
  // PW_BENCH_SOAK_VARIANT=unit|defaults: only one of them, for measuring a change to it.
  const only = process.env.PW_BENCH_SOAK_VARIANT;
  const variants: Array<{ label: string; flags: string[]; env: Record<string, string>; goalMb: number }> = opts.smoke || only === 'unit'
    ? [asUnit]
    : only === 'defaults'
      ? [asDefaults]
      : [asUnit, asDefaults];
  const rows: BenchRow[] = [];
  const notes: string[] = [];
  // The variants run side by side (each its own child, pty and database): CPU figures are per child.
  const outcomes = await Promise.all(variants.map((variant) => soakService(durationMs, variant.flags, variant.env)));
  for (const [i, variant] of variants.entries()) {
    const outcome = outcomes[i]!;
    const days = durationMs / DAY_MS;
    const growth = outcome.rssEndMb - outcome.rssDay1Mb;
    rows.push(
      infoRow(`${variant.label}: RSS after start`, outcome.rssStartMb, 'MB'),
      {
        figure: `${variant.label}: RSS at the end`,
        value: outcome.rssEndMb,
        unit: 'MB',
        reference: durationMs < DAY_MS ? 'RSS after start' : 'RSS after day 1',
        referenceValue: outcome.rssDay1Mb,
        ratio: outcome.rssEndMb / outcome.rssDay1Mb,
        target: `≤ ${variant.goalMb} MB, ≤ +${FLAT_GROWTH * 100} % after day 1`,
        met: outcome.rssEndMb <= variant.goalMb && growth <= FLAT_GROWTH * outcome.rssDay1Mb,
      },
      infoRow(`${variant.label}: highest RSS read (without a forced collection)`, outcome.rssPeakMb, 'MB'),
      infoRow(`${variant.label}: JS heap in use at the end`, outcome.heapEndMb, 'MB'),
      ...(outcome.rssFileEndMb === null || outcome.rssAnonEndMb === null
        ? []
        : [
            infoRow(`${variant.label}: of the RSS at the end, file-backed (node's own binary, shared and clean)`, outcome.rssFileEndMb, 'MB'),
            infoRow(`${variant.label}: of the RSS at the end, anonymous (heaps and allocations)`, outcome.rssAnonEndMb, 'MB'),
          ]),
      infoRow(`${variant.label}: CPU of the daemon per simulated day`, outcome.cpuS / days, 's'),
    );
    notes.push(
      `${variant.label} (${[...Object.entries(variant.env).map(([k, v]) => `${k}=${v}`), ...variant.flags].join(' ') || 'no flags'}): ${outcome.lines.toLocaleString('en-GB')} lines over ${(durationMs / 3_600_000).toFixed(1)} simulated hours in ${outcome.wallS.toFixed(0)} s of wall time; ` +
        `${outcome.polls} API polls (all 200: ${outcome.pollsOk === outcome.polls ? 'yes' : `no, ${outcome.polls - outcome.pollsOk} not`}), ${outcome.acked} alarms acknowledged through the API, ${outcome.mails} mail files written, database file ${outcome.dbMb.toFixed(1)} MB at the end.`,
    );
  }
  notes.push(
    `Fed: the project's simulated decoder, ${LOOPS} loops, TICK every 200 ms, each node pulsing 1 ms every 500 ms ±10 % (the real heartbeat rate: 4 band changes a second per loop, about 11.4 M lines a simulated day), with the 30-day soak's daily trouble (4 freezes, a cut, a short, lost frames) on rotating loops.`,
    `Each simulated second's lines are written into a socat pty the daemon reads through serialport; then the daemon's clock (Date.now and its timers, faked in the child only) moves one second. Node's own socket and HTTP timers keep real time.`,
    `RSS at start, after day 1 and at the end is read after a forced garbage collection (the child runs with --expose-gc), so "flat" compares live memory; the highest reading without a collection is shown beside it.`,
  );
  return { name: 'service-soak', title: `Service soak: the real daemon, ${LOOPS} loops at the real heartbeat rate${opts.smoke ? ' (smoke)' : ''}`, rows, notes };
}

export interface SoakOutcome {
  rssStartMb: number;
  rssDay1Mb: number;
  rssEndMb: number;
  rssPeakMb: number;
  rssFileEndMb: number | null;
  rssAnonEndMb: number | null;
  heapEndMb: number;
  cpuS: number;
  wallS: number;
  lines: number;
  polls: number;
  pollsOk: number;
  acked: number;
  mails: number;
  dbMb: number;
}

/**
 * The Node flags and environment the systemd unit gives the daemon, read from deploy/pairwatch.service
 * itself so the "unit" variant cannot drift from what is installed: the words between the node binary
 * and the script in ExecStart, and every Environment= assignment.
 */
export function unitRuntime(unitText = readFileSync(join(findPackageRoot(), 'deploy', 'pairwatch.service'), 'utf8')): {
  flags: string[];
  env: Record<string, string>;
} {
  const exec = /^ExecStart=(\S+)\s+(.*)$/m.exec(unitText);
  if (!exec) throw new BenchError('PW_BENCH_UNIT', 'deploy/pairwatch.service has no ExecStart line');
  const words = exec[2]!.split(/\s+/);
  const script = words.findIndex((word) => !word.startsWith('-'));
  const env: Record<string, string> = {};
  for (const line of unitText.matchAll(/^Environment=(.*)$/gm)) {
    for (const assignment of line[1]!.split(/\s+/).filter(Boolean)) {
      const eq = assignment.indexOf('=');
      if (eq > 0) env[assignment.slice(0, eq)] = assignment.slice(eq + 1);
    }
  }
  return { flags: words.slice(0, script < 0 ? words.length : script), env };
}

/** One soak of the real daemon for `durationMs` of simulated time, with `flags` and `env` for its Node. */
export async function soakService(durationMs: number, flags: string[], env: Record<string, string> = {}): Promise<SoakOutcome> {
  const folder = makeTempFolder('service-soak');
  const pty = await openPtyPair(folder.dir);
  let child: ChildProcess | null = null;
  try {
    const config = benchSiteConfig({
      loops: LOOPS,
      port: pty.devicePath,
      dbPath: folder.path('site.db'),
      extra: {
        contacts: [{ id: 'office', name: 'Bench office', email: 'office@marrowby-bench.example' }],
        mail: { from: 'Bench monitor <monitor@marrowby-bench.example>', drop_folder: folder.path('mail') },
        report: { at: '07:00', notify: ['office'] },
      },
    });
    const viewer = grantApiToken(config.storage.path, START_MS, 'viewer');
    const operator = grantApiToken(config.storage.path, START_MS, 'operator');
    const script = join(findPackageRoot(), 'dist', 'bench', 'support', 'serviceSoakChild.js');
    if (!existsSync(script)) throw new BenchError('PW_BENCH_NOT_BUILT', `${script} is missing: build first (npx tsc -p tsconfig.json)`);
    child = fork(script, [], { execArgv: [...flags, '--expose-gc'], env: { ...process.env, ...env }, stdio: ['ignore', 'ignore', 'pipe', 'ipc'] });
    let stderr = '';
    child.stderr!.on('data', (chunk: Buffer) => {
      stderr = (stderr + chunk.toString()).slice(-4000);
      if (process.env.PW_BENCH_TRACE_MEMORY) process.stderr.write(chunk);
    });
    const ask = askChild(child, () => stderr);

    await ask({ kind: 'start', config, configDir: folder.dir, startMs: START_MS, logFile: folder.path('monitor.log') });
    const simulator = openSimulatedDecoder({ loops: LOOPS, periodMs: 500, jitter: 0.1, tickMs: 200, events: dailyTrouble(Math.ceil(durationMs / DAY_MS), LOOPS), seed: 23 });
    const wallBefore = performance.now();
    let lines = 0;
    let polls = 0;
    let pollsOk = 0;
    let acked = 0;
    let rssPeakMb = 0;
    let rssStartMb = 0;
    let rssDay1Mb = 0;
    const memory = async (collect: boolean) => {
      const reply = await ask({ kind: 'memory', collect });
      if (reply.kind !== 'memory') throw new BenchError('PW_BENCH_CHILD', `unexpected reply ${reply.kind}`);
      return reply;
    };
    for (let t = STEP_MS; t <= durationMs; t += STEP_MS) {
      // Lines up to the previous step are in the pty; the clock moves to t once the daemon has handled them.
      await ask({ kind: 'advance', to: START_MS + t, linesWritten: lines });
      const batch = simulator.advanceTo(t * 1000);
      if (batch.length > 0) {
        pty.write(batch.map((l) => `${l.line}\n`).join(''));
        lines += batch.length;
      }
      if (t % POLL_EVERY_MS === 0) {
        const reply = await ask({ kind: 'get', path: '/api/v1/loops', token: viewer });
        polls += 1;
        if (reply.kind === 'response' && reply.status === 200) pollsOk += 1;
      }
      if (t % 3_600_000 === 0 || t === 60_000) {
        const m = await memory(false);
        rssPeakMb = Math.max(rssPeakMb, m.rssMb);
        if (t === 60_000) rssStartMb = m.rssMb;
      }
      if (t % DAY_MS === 0) {
        acked += await acknowledgeAll(ask, operator);
        if (t === DAY_MS) rssDay1Mb = (await memory(true)).rssMb;
      }
    }
    await ask({ kind: 'advance', to: START_MS + durationMs + STEP_MS, linesWritten: lines });
    if (durationMs % DAY_MS !== 0) acked += await acknowledgeAll(ask, operator);
    const end = await memory(true);
    const wallS = (performance.now() - wallBefore) / 1000;
    await ask({ kind: 'stop' });
    const mailDir = folder.path('mail');
    const mails = existsSync(mailDir) ? readdirSync(mailDir).filter((f) => f.endsWith('.eml')).length : 0;
    return {
      rssStartMb,
      rssDay1Mb: rssDay1Mb || rssStartMb,
      rssEndMb: end.rssMb,
      rssPeakMb,
      rssFileEndMb: end.rssFileMb,
      rssAnonEndMb: end.rssAnonMb,
      heapEndMb: end.heapUsedMb,
      cpuS: end.cpuS,
      wallS,
      lines,
      polls,
      pollsOk,
      acked,
      mails,
      dbMb: statSync(config.storage.path).size / 2 ** 20,
    };
  } finally {
    if (child && child.exitCode === null) child.kill('SIGKILL');
    await pty.close();
    folder.remove();
  }
}

type Ask = (request: SoakRequest) => Promise<SoakReply>;

/** One request at a time; a child that fails or dies ends the run with its own words. */
function askChild(child: ChildProcess, stderr: () => string): Ask {
  let waiting: { resolve: (reply: SoakReply) => void; reject: (err: Error) => void } | null = null;
  child.on('message', (reply: SoakReply) => {
    const w = waiting;
    waiting = null;
    if (!w) return;
    if (reply.kind === 'failed') w.reject(new BenchError('PW_BENCH_CHILD', `the daemon under soak failed: ${reply.message}`));
    else w.resolve(reply);
  });
  child.on('exit', (code, signal) => {
    waiting?.reject(new BenchError('PW_BENCH_CHILD', `the daemon under soak exited (${signal ?? code}): ${stderr().trim()}`));
    waiting = null;
  });
  return (request) =>
    new Promise((resolve, reject) => {
      waiting = { resolve, reject };
      child.send(request);
    });
}

/** The midnight round: every alarm still waiting for someone is acknowledged through the REST API. */
async function acknowledgeAll(ask: Ask, token: string): Promise<number> {
  const reply = await ask({ kind: 'get', path: '/api/v1/alarms?status=active', token });
  if (reply.kind !== 'response' || reply.status !== 200) throw new BenchError('PW_BENCH_API', `GET /api/v1/alarms?status=active answered ${reply.kind === 'response' ? `${reply.status}: ${reply.body.slice(0, 200)}` : reply.kind}`);
  const listed = JSON.parse(reply.body) as Array<{ id: number; state: string }>;
  if (process.env.PW_BENCH_TRACE_MEMORY) process.stderr.write(`midnight round: ${listed.map((a) => `#${a.id} ${a.state}`).join(', ') || 'no alarms listed'}\n`);
  let acked = 0;
  for (const alarm of listed) {
    if (alarm.state !== 'unacknowledged' && alarm.state !== 'returned-unacknowledged') continue;
    const ack = await ask({ kind: 'post', path: `/api/v1/alarms/${alarm.id}/ack`, token, body: { note: 'midnight round' } });
    if (ack.kind !== 'response' || ack.status !== 200) throw new BenchError('PW_BENCH_API', `acknowledging alarm ${alarm.id} answered ${ack.kind === 'response' ? `${ack.status}: ${ack.body.slice(0, 200)}` : ack.kind}`);
    acked += 1;
  }
  return acked;
}
