import { execFileSync } from 'node:child_process';
import { closeSync, mkdirSync, openSync, readdirSync, readFileSync, rmSync, writeSync } from 'node:fs';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { createSimulator, type Simulator } from '../../src/sim/createSimulator.js';
import { scenarioSchema } from '../../src/sim/scenarioSchema.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { faultSiteYaml, loopIdOf, OUTBUILDINGS } from './fixtures/siteYaml.js';
import { startSmtpCounter, type SmtpCounter } from './fixtures/smtpCounter.js';

/**
 * Issue 16 item 1: alarms raised while the disk under the database is full must still be mailed — from
 * memory, as the storage alert is — recorded once the disk has room again without a second mail, and a
 * stop with the disk still full must neither drop them silently nor keep quiet about what was queued.
 *
 * Same rig as storageFailure.test.ts: a 16 MB tmpfs filled to the last byte, so SQLite itself answers
 * SQLITE_FULL; the monitor in-process on a simulated clock, its repeating timers faked. Needs root for
 * the mount (CI runs as root); skipped with the reason otherwise.
 */
const T0 = Date.UTC(2026, 1, 9, 2, 0, 0);
const STEP_MS = 250;
const LOOPS = 4;
const FREEZE_AT_MS = 40_000; // loop 2 trips while the disk is full
const CUT_AT_MS = 45_000; // loop 3 opens while the disk is full
const SECOND_FREEZE_AT_MS = 150_000; // loop 4 trips during the second fill, just before the stop

let tmp: TempDir;
let disk: string;
let dbPath: string;
let mountProblem: string | null = null;
let monitor: Monitor | null = null;
let smtp: SmtpCounter | null = null;
let nowMs = T0;
let simulator: Simulator;
const logLines: Array<{ msg: string; [key: string]: unknown }> = [];

const mentions = (name: string) => smtp!.messages.filter((m) => `${m.subject} ${m.text}`.includes(name)).length;

const observed = {
  failingAtMs: null as number | null,
  mailsDuringFull: { tripped: 0, open: 0 },
  recovered: false,
  mailsAfterRecovery: { tripped: 0, open: 0 },
  noticesQueuedForThem: -1,
  directAudit: 0,
  secondFailing: false,
  stopLog: null as { msg: string; [key: string]: unknown } | null,
  unsavedFile: null as null | { alarms: Array<{ loopId: string | null; condition: string }>; queued: Record<string, number> },
  mailsForSecondTrip: 0,
};

async function step(): Promise<void> {
  nowMs += STEP_MS;
  for (const { atUs, line } of simulator.advanceTo((nowMs - T0) * 1000)) monitor!.core.line('yard', line, T0 + atUs / 1000);
  vi.advanceTimersByTime(STEP_MS);
  await monitor!.runNotifications();
  await new Promise((r) => setImmediate(r));
}

async function stepUntil(limitMs: number, done: () => boolean): Promise<boolean> {
  while (nowMs - T0 < limitMs) {
    await step();
    if (done()) return true;
  }
  return false;
}

async function realWaitFor(done: () => boolean, ms = 5000): Promise<void> {
  const deadline = Date.now() + ms;
  while (!done() && Date.now() < deadline) await new Promise((r) => setTimeout(r, 20));
}

function fillDisk(path: string): void {
  const fd = openSync(path, 'w');
  try {
    for (const size of [1 << 20, 1 << 16, 1 << 12, 1 << 9, 1]) {
      const chunk = Buffer.alloc(size, 0x55);
      for (;;) {
        try {
          writeSync(fd, chunk);
        } catch {
          break;
        }
      }
    }
  } finally {
    closeSync(fd);
  }
}

beforeAll(async () => {
  tmp = makeTempDir('pw-faults-fulldisk-mail-');
  disk = join(tmp.dir, 'small-disk');
  mkdirSync(disk);
  try {
    execFileSync('mount', ['-t', 'tmpfs', '-o', 'size=16m', 'tmpfs', disk], { stdio: 'pipe' });
  } catch (error) {
    mountProblem = `mount -t tmpfs is not permitted here (${String((error as { stderr?: Buffer }).stderr ?? error).trim()})`;
    return;
  }
  vi.useFakeTimers({ toFake: ['setInterval', 'clearInterval'] });
  smtp = await startSmtpCounter();
  dbPath = join(disk, 'brackenfold.db');
  const config = parseConfig(faultSiteYaml({ port: join(tmp.dir, 'unplugged'), loops: LOOPS, dbPath, smtpPort: smtp.port, groupWindow: '1s' }));
  simulator = createSimulator(
    scenarioSchema.parse({
      decoder: { inputs: LOOPS, firmware: 'disk-2', tick_ms: 200 },
      seed: 11,
      loops: Array.from({ length: LOOPS }, (_, i) => ({ input: i + 1, period_ms: 500, pulse_ms: 1, jitter: 0.1 })),
      events: [
        { at: FREEZE_AT_MS, input: 2, action: 'freeze' },
        { at: CUT_AT_MS, input: 3, action: 'cut' },
        { at: SECOND_FREEZE_AT_MS, input: 4, action: 'freeze' },
      ],
    }),
  );
  const logger = pino({ level: 'info' }, { write: (line: string) => void logLines.push(JSON.parse(line) as { msg: string }) });
  monitor = await startMonitor({ config, configDir: tmp.dir, logger, now: () => nowMs, listen: false, announce: false });
  const deadline = Date.now() + 10_000;
  while (monitor.core.linkOf('yard')?.state !== 'disconnected' && Date.now() < deadline) await new Promise((r) => setTimeout(r, 10));
  monitor.core.linkStatus('yard', { state: 'connected' }, nowMs);

  await stepUntil(20_000, () => false);
  fillDisk(join(disk, 'filler.bin'));
  if (await stepUntil(FREEZE_AT_MS - 5_000, () => monitor!.writer.status().failing !== null)) observed.failingAtMs = nowMs;
  if (observed.failingAtMs === null) return;

  await stepUntil(CUT_AT_MS + 10_000, () => false);
  // Mail goes over a real socket: give it real time to arrive (bounded).
  await realWaitFor(() => mentions(OUTBUILDINGS[1]) > 0 && mentions(OUTBUILDINGS[2]) > 0);
  observed.mailsDuringFull = { tripped: mentions(OUTBUILDINGS[1]), open: mentions(OUTBUILDINGS[2]) };

  rmSync(join(disk, 'filler.bin'));
  observed.recovered = await stepUntil(CUT_AT_MS + 60_000, () => monitor!.writer.status().failing === null && monitor!.writer.pending() === 0);
  await stepUntil(nowMs - T0 + 30_000, () => false);
  await realWaitFor(() => false, 300);
  observed.mailsAfterRecovery = { tripped: mentions(OUTBUILDINGS[1]), open: mentions(OUTBUILDINGS[2]) };
  const db = new Database(dbPath, { readonly: true });
  const ids = (db.prepare(`SELECT id FROM alarms WHERE loop_id IN (?, ?)`).all(loopIdOf(2), loopIdOf(3)) as Array<{ id: number }>).map((r) => r.id);
  const inList = ids.join(',') || '0';
  observed.noticesQueuedForThem =
    (db.prepare(`SELECT COUNT(*) AS n FROM pending_notices WHERE alarm_id IN (${inList})`).get() as { n: number }).n +
    (db.prepare(`SELECT COUNT(*) AS n FROM outbox WHERE kind = 'notice' AND EXISTS (SELECT 1 FROM json_each(alarm_ids_json) WHERE value IN (${inList}))`).get() as { n: number }).n;
  observed.directAudit = (db.prepare(`SELECT COUNT(*) AS n FROM audit WHERE action = 'mail-sent' AND alarm_id IN (${inList}) AND note LIKE '%directly%'`).get() as { n: number }).n;
  db.close();

  // Second fill, and a stop before the disk has room again.
  fillDisk(join(disk, 'filler.bin'));
  observed.secondFailing = await stepUntil(SECOND_FREEZE_AT_MS - 5_000, () => monitor!.writer.status().failing !== null);
  await stepUntil(SECOND_FREEZE_AT_MS + 3_000, () => false);
  await monitor.stop('test: stop with the disk full', 5000);
  monitor = null;
  observed.stopLog = logLines.find((l) => l.msg.startsWith('stopping with')) ?? null;
  const file = readdirSync(disk).find((f) => f.startsWith('unsaved-alarms-'));
  if (file) observed.unsavedFile = JSON.parse(readFileSync(join(disk, file), 'utf8')) as NonNullable<typeof observed.unsavedFile>;
  observed.mailsForSecondTrip = mentions(OUTBUILDINGS[3]);
}, 120_000);

afterAll(async () => {
  await monitor?.stop('test over', 2000).catch(() => undefined);
  vi.useRealTimers();
  await smtp?.close();
  if (mountProblem === null && disk) execFileSync('umount', ['-l', disk]);
  tmp?.cleanup();
});

describe('alarm mail on a full disk (issue 16 item 1)', () => {
  it('mails each alarm raised while the disk is full, while it is still full', (ctx) => {
    if (mountProblem) ctx.skip(mountProblem);
    expect(observed.failingAtMs, 'the disk really filled before the trips').not.toBeNull();
    expect(observed.mailsDuringFull).toEqual({ tripped: 1, open: 1 });
  });

  it('records them once the disk recovers, without a second mail', (ctx) => {
    if (mountProblem) ctx.skip(mountProblem);
    expect(observed.recovered).toBe(true);
    expect(observed.mailsAfterRecovery).toEqual({ tripped: 1, open: 1 });
    expect(observed.noticesQueuedForThem).toBe(0);
    expect(observed.directAudit).toBeGreaterThanOrEqual(2);
  });

  it('a stop with the disk full mails the new alarm, logs what was queued and keeps the open alarms in a file', (ctx) => {
    if (mountProblem) ctx.skip(mountProblem);
    expect(observed.secondFailing).toBe(true);
    expect(observed.mailsForSecondTrip).toBe(1);
    expect(observed.stopLog, 'a log line saying what was still queued').not.toBeNull();
    expect(Object.keys(observed.stopLog!['queued'] as object)).toContain('state');
    expect(observed.unsavedFile).not.toBeNull();
    expect(observed.unsavedFile!.alarms.map((a) => `${a.loopId}/${a.condition}`)).toEqual(
      expect.arrayContaining([`${loopIdOf(4)}/tripped`]),
    );
  });
});
