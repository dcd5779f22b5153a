import Database from 'better-sqlite3';
import { spawn, type ChildProcess } from 'node:child_process';
import { openSync, readdirSync, readlinkSync, realpathSync, writeFileSync, closeSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { encodeLine } from '../../src/protocol/encodeLine.js';
import { scenarioSchema } from '../../src/sim/scenarioSchema.js';
import { findPackageRoot } from '../../src/store/openDatabase.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { startSocatPair, type SocatPair } from '../helpers/socatPair.js';
import { stopChild } from '../helpers/stopChild.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';
import { buildFirmware, runFirmware, waveformFromScenario } from '../../bench/firmwareSim.js';

/**
 * Pin to phone: the real firmware under simavr, its UART written into a pseudo-terminal (socat) as a
 * USB-serial bridge would, `pairwatch run` (the built CLI, in its own process) reading that port as
 * its decoder at the config's default speed, and a real SMTP server on loopback. The pins are driven
 * by a scenario from src/sim: a freeze, a cut and a short on three loops.
 */
const CLI = join(findPackageRoot(), 'dist', 'src', 'cli', 'main.js');

/** True once the process has the pseudo-terminal open (its /proc fd links), so no line is written to nobody. */
function holdsPort(child: ChildProcess, port: string): boolean {
  const target = realpathSync(port);
  try {
    return readdirSync(`/proc/${child.pid}/fd`).some((fd) => {
      try {
        return readlinkSync(`/proc/${child.pid}/fd/${fd}`) === target;
      } catch {
        return false;
      }
    });
  } catch {
    return false;
  }
}

function collect(child: ChildProcess): { out: () => string; exited: Promise<number | null> } {
  let out = '';
  child.stdout?.on('data', (c: Buffer) => (out += c.toString()));
  child.stderr?.on('data', (c: Buffer) => (out += c.toString()));
  return { out: () => out, exited: new Promise((resolve) => child.once('exit', (code) => resolve(code))) };
}

const loops = Array.from({ length: 8 }, (_, i) => ({ input: i + 1, period_ms: 500, pulse_ms: 1, jitter: 0.04 }));
const names = ['Well pit', 'Pump house', 'Glasshouse', 'Apple store', 'Workshop', 'Hay barn', 'Stable', 'Dairy'];

beforeAll(() => buildFirmware(), 120_000);

describe('pin to phone: simulated firmware → pseudo-terminal → pairwatch run → SMTP', () => {
  let tmp: TempDir;
  let socat: SocatPair;
  let smtp: SmtpSink;
  let monitor: ChildProcess | null = null;

  beforeAll(async () => {
    tmp = makeTempDir('pairwatch-pin-to-phone-');
    socat = await startSocatPair(tmp.dir);
    smtp = await startSmtpSink({ user: 'monitor', pass: 'pw-test' });
  });

  afterAll(async () => {
    if (monitor) await stopChild(monitor);
    await smtp?.close();
    await socat?.stop();
    tmp?.cleanup();
  });

  it('a freeze ends as tripped with an alarm mail, a cut as open, a short as shorted', async () => {
    const config = join(tmp.dir, 'site.yaml');
    writeFileSync(
      config,
      `
site: { name: "Bench Farm", timezone: "Europe/London" }
decoders: [{ id: main, port: ${socat.a}, inputs: 8 }]
loops:
${names.map((n, i) => `  - { id: loop-${i + 1}, name: "${n}", decoder: main, input: ${i + 1} }`).join('\n')}
contacts: [{ id: office, name: "Farm office", email: "office@example.org" }]
escalation: { default: { steps: [{ after: 0m, notify: [office] }], repeat_every: 30m } }
mail:
  from: "pairwatch <monitor@example.org>"
  smtp: { host: 127.0.0.1, port: ${smtp.port}, user: monitor, pass: pw-test }
  group_window: 0s
storage: { path: ${join(tmp.dir, 'site.db')} }
web: { listen: "127.0.0.1:0" }
`,
    );
    monitor = spawn(process.execPath, [CLI, 'run', '--config', config], { stdio: ['ignore', 'pipe', 'pipe'], env: { ...process.env, PAIRWATCH_LOG_LEVEL: 'warn' } });
    const log = collect(monitor);
    await waitFor(() => holdsPort(monitor!, socat.a), 20_000, () => `pairwatch run to open the decoder port; it said: ${log.out()}`);

    const scenario = scenarioSchema.parse({
      decoder: { inputs: 8 },
      seed: 42,
      loops,
      events: [
        { at: 2500, action: 'freeze', input: 3 },
        { at: 2500, action: 'cut', input: 2 },
        { at: 2500, action: 'short', input: 5 },
      ],
    });
    const waveform = waveformFromScenario(scenario, 0, 5_000_000);
    await runFirmware({ waveform, untilUs: 5_000_000, live: socat.b });

    const db = new Database(join(tmp.dir, 'site.db'), { readonly: true, fileMustExist: true });
    try {
      const states = () => Object.fromEntries((db.prepare('SELECT loop_id, state FROM loop_status').all() as Array<{ loop_id: string; state: string }>).map((r) => [r.loop_id, r.state]));
      const want = { 'loop-1': 'healthy', 'loop-2': 'open', 'loop-3': 'tripped', 'loop-4': 'healthy', 'loop-5': 'shorted', 'loop-6': 'healthy', 'loop-7': 'healthy', 'loop-8': 'healthy' };
      await waitFor(() => JSON.stringify(states()) === JSON.stringify(want), 20_000, () => `loop states ${JSON.stringify(want)}, have ${JSON.stringify(states())}`);
      const hello = db.prepare('SELECT firmware, loops FROM decoder_sessions WHERE firmware IS NOT NULL').get() as { firmware: string; loops: number };
      expect(hello.firmware).toMatch(/^pairwatch-avr-/);
      expect(hello.loops).toBe(8);
    } finally {
      db.close();
    }
    // The cut and the short come within the mail grouping window of the trip, so one mail may carry all three.
    const isTripMail = (subject: string | undefined) => subject !== undefined && subject.startsWith('[ALARM] Bench Farm:') && /Glasshouse( —)? tripped/.test(subject);
    await waitFor(() => smtp.messages.some((m) => isTripMail(m.subject)), 20_000, () => `the alarm mail, have ${smtp.messages.map((m) => m.subject).join(' | ')}`);
    const alarm = smtp.messages.find((m) => isTripMail(m.subject))!;
    expect(alarm.text).toMatch(/\/ack\/[A-Za-z0-9_-]+/);
    const mentions = (name: string) => smtp.messages.some((m) => (m.text ?? '').includes(name));
    await waitFor(() => mentions('Pump house') && mentions('Workshop'), 20_000, () => 'trouble mail for the cut and the short');
  }, 90_000);
});

describe('pairwatch conformance on a pseudo-terminal', () => {
  async function conformance(feed: (port: string) => Promise<void>): Promise<{ code: number | null; out: string }> {
    const tmp = makeTempDir('pairwatch-conformance-');
    const socat = await startSocatPair(tmp.dir);
    try {
      const child = spawn(process.execPath, [CLI, 'conformance', socat.a, '--seconds', '4'], { stdio: ['ignore', 'pipe', 'pipe'] });
      const run = collect(child);
      await waitFor(() => holdsPort(child, socat.a), 20_000, () => `conformance to open the port: ${run.out()}`);
      await feed(socat.b);
      const code = await run.exited;
      return { code, out: run.out() };
    } finally {
      await socat.stop();
      tmp.cleanup();
    }
  }

  it('passes every rule on the simulated firmware', async () => {
    const waveform = waveformFromScenario(scenarioSchema.parse({ decoder: { inputs: 8 }, loops }), 0, 1_000_000);
    const { code, out } = await conformance(async (port) => {
      await runFirmware({ waveform, untilUs: 1_000_000, live: port });
    });
    expect(out).toMatch(/HELLO 1 8 pairwatch-avr-/);
    expect(out.split('\n').filter((l) => /^(pass|FAIL) /.test(l))).toHaveLength(9);
    expect(out).not.toMatch(/^FAIL/m);
    expect(out).toMatch(/conforms to decoder protocol v1/);
    expect(code).toBe(0);
  }, 60_000);

  it('fails, line by line, on a deliberately broken stream', async () => {
    const seal = (body: string) => encodeLine(body);
    const { code, out } = await conformance(async (port) => {
      const fd = openSync(port, 'w');
      try {
        writeSync(fd, [seal('HELLO 1 8 mine-0.1'), seal('TICK 0 1000 NNNNNNNN'), 'EDGE 1 2000 1 H*0000\n', seal('EDGE 3 3000 1 Q'), seal('FAULT 4 2500 HOT')].join(''));
      } finally {
        closeSync(fd);
      }
    });
    const failed = out.split('\n').filter((l) => l.startsWith('FAIL'));
    expect(failed.some((l) => /CRC-16/.test(l) && /line 3/.test(l))).toBe(true);
    expect(failed.some((l) => /band letters/.test(l) && /line 4/.test(l))).toBe(true);
    expect(failed.some((l) => /FAULT codes/.test(l) && /line 5/.test(l))).toBe(true);
    expect(out).toMatch(/^pass  HELLO first/m);
    expect(code).toBe(1);
  }, 60_000);
});
