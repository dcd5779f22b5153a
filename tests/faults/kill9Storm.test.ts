import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { seedApiToken } from './fixtures/apiClient.js';
import { bareMessageId, readCommitted, type Committed } from './fixtures/dbSnapshot.js';
import { startDecoderFeeder, type DecoderFeeder } from './fixtures/decoderFeeder.js';
import { killAllDaemons, spawnDaemon, type DaemonProcess } from './fixtures/daemonProcess.js';
import { privateBuild } from './fixtures/privateBuild.js';
import { seededRandom } from './fixtures/seeded.js';
import { faultSiteYaml } from './fixtures/siteYaml.js';
import { startSmtpCounter, type SmtpCounter } from './fixtures/smtpCounter.js';
import { calmScenario, stormScenario } from './fixtures/stormScenario.js';

/**
 * Power cut mid-write, twenty times: the real daemon (a child process) is killed with SIGKILL at
 * seeded random moments while 16 loops flap, and restarted each time. What a read-only observer saw
 * committed just before each kill must still be there afterwards; every mail the outbox ever held
 * must reach a real SMTP server at least once; and no reminder or escalation may be queued for an
 * alarm somebody had already acknowledged (through the API, with a token).
 */
const ROUNDS = 20;
const LOOPS = 16;
const SEED = 0x5eed_0006;
const TOKEN = `pwt_${'k'.repeat(43)}`;

let tmp: TempDir;
let dbPath: string;
let configFile: string;
let feeder: DecoderFeeder;
let smtp: SmtpCounter;

beforeAll(async () => {
  privateBuild();
  tmp = makeTempDir('pw-faults-kill9-');
  dbPath = join(tmp.dir, 'data', 'brackenfold.db');
  smtp = await startSmtpCounter();
  feeder = await startDecoderFeeder(stormScenario({ loops: LOOPS, seconds: 900, seed: SEED, firstFaultAtMs: 1500 }));
  configFile = join(tmp.dir, 'site.yaml');
  writeFileSync(
    configFile,
    faultSiteYaml({
      port: `tcp://127.0.0.1:${feeder.port}`,
      loops: LOOPS,
      dbPath,
      listen: '127.0.0.1:0',
      smtpPort: smtp.port,
      // Short enough that escalation steps and repeats fall inside a round.
      secondStepAfter: '2s',
      repeatEvery: '3s',
      maxRepeats: 3,
      groupWindow: '300ms',
      retryFirst: '1s',
      retryMax: '3s',
    }),
  );
  // An operator's API token, stored as the CLI would (only its hash), before the daemon first starts.
  seedApiToken(dbPath, TOKEN, 'operator', 'yard-script');
}, 60_000);

afterAll(async () => {
  await killAllDaemons();
  await feeder?.close();
  await smtp?.close();
  tmp?.cleanup();
});

const auth = { authorization: `Bearer ${TOKEN}`, 'content-type': 'application/json' };

interface ApiAlarm {
  id: number;
  state: string;
  ackedAt: string | null;
}

async function activeAlarms(address: string): Promise<ApiAlarm[]> {
  const response = await fetch(`${address}/api/v1/alarms?status=active`, { headers: auth, signal: AbortSignal.timeout(2000) });
  if (response.status !== 200) throw new Error(`GET /api/v1/alarms: ${response.status}`);
  return (await response.json()) as ApiAlarm[];
}

/** Acknowledges; returns the alarm as the API confirmed it, or null when the daemon did not confirm. */
async function acknowledge(address: string, id: number): Promise<ApiAlarm | null> {
  const response = await fetch(`${address}/api/v1/alarms/${id}/ack`, {
    method: 'POST',
    headers: auth,
    body: JSON.stringify({ note: 'seen from the yard' }),
    signal: AbortSignal.timeout(2000),
  });
  return response.status === 200 ? ((await response.json()) as ApiAlarm) : null;
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Everything `before` held is in `after`: rows never vanish, committed facts never change. */
function expectKept(before: Committed, after: Committed, round: number): void {
  const afterChanges = new Map(after.stateChanges.map((r) => [r.id, r]));
  for (const row of before.stateChanges) expect(afterChanges.get(row.id), `round ${round}: state change ${row.id}`).toEqual(row);

  const afterAlarms = new Map(after.alarms.map((a) => [a.id, a]));
  for (const alarm of before.alarms) {
    const now = afterAlarms.get(alarm.id);
    expect(now, `round ${round}: alarm ${alarm.id}`).toBeDefined();
    expect({ ...now!, state: 0, active: 0, cleared_at: 0, acked_at: 0, acked_by: 0, closed_at: 0 }).toEqual({
      ...alarm,
      state: 0,
      active: 0,
      cleared_at: 0,
      acked_at: 0,
      acked_by: 0,
      closed_at: 0,
    });
    // An acknowledgement once committed stays, with who and when.
    if (alarm.acked_at !== null) expect([now!.acked_at, now!.acked_by]).toEqual([alarm.acked_at, alarm.acked_by]);
    if (alarm.closed_at !== null) expect(now!.closed_at).toBe(alarm.closed_at);
  }

  const afterOutbox = new Map(after.outbox.map((r) => [r.id, r]));
  for (const row of before.outbox) {
    const now = afterOutbox.get(row.id);
    expect(now?.message_id, `round ${round}: outbox row ${row.id}`).toBe(row.message_id);
    if (row.status !== 'pending') expect(now!.status).toBe(row.status);
  }

  const afterAudit = new Map(after.audit.map((r) => [r.id, r]));
  for (const row of before.audit) expect(afterAudit.get(row.id), `round ${round}: audit ${row.id}`).toEqual(row);
}

/**
 * The one-transaction promise seen from outside: every committed change into tripped, open or shorted
 * has its alarm (one for that loop and condition, not closed before the change) and that alarm has its
 * notices queued. Trouble flaps of a loop flagged intermittent are deliberately not raised one by one,
 * so those loops' open/shorted changes are left out.
 */
function expectFaultsHaveAlarms(c: Committed, label: string): void {
  const notified = new Set(c.notifiedAlarmIds);
  const intermittentLoops = new Set(c.alarms.filter((a) => a.condition === 'intermittent').map((a) => a.loop_id));
  for (const change of c.stateChanges) {
    if (!['tripped', 'open', 'shorted'].includes(change.to_state)) continue;
    if (change.to_state !== 'tripped' && intermittentLoops.has(change.loop_id)) continue;
    const at = Date.parse(change.at);
    const alarm = c.alarms.find(
      (a) => a.source === change.loop_id && a.condition === change.to_state && (a.closed_at === null || Date.parse(a.closed_at) >= at),
    );
    expect(alarm, `${label}: state change ${change.id} (${change.loop_id} → ${change.to_state}) without its alarm`).toBeDefined();
    expect(notified.has(alarm!.id), `${label}: alarm ${alarm!.id} for state change ${change.id} without its notices`).toBe(true);
  }
}

describe('kill -9 of the real daemon during a fault storm (16 loops flapping), 20 rounds', () => {
  it('keeps everything committed, delivers every queued mail, and never reminds about an acknowledged alarm', async () => {
    const random = seededRandom(SEED);
    const confirmedAcks = new Map<number, string>();
    const seenBeforeKills: Committed[] = [];
    let killedWhileStarting = 0;

    for (let round = 1; round <= ROUNDS; round++) {
      const daemon: DaemonProcess = spawnDaemon(configFile);
      const spawnedAt = Date.now();
      // Some kills land during start-up (migrations, first commits), most while it is busy.
      const lifetimeMs = random.int(250, 3200);
      let address: string | null = null;
      void daemon.waitForAddress(20_000).then(
        (a) => (address = a),
        () => undefined,
      );
      while (Date.now() - spawnedAt < lifetimeMs) {
        expect(daemon.isRunning(), `round ${round}: daemon exited by itself: ${daemon.stderr()}`).toBe(true);
        if (address !== null && random.next() < 0.5) {
          try {
            for (const alarm of await activeAlarms(address)) {
              if (alarm.state !== 'unacknowledged' && alarm.state !== 'returned-unacknowledged') continue;
              if (random.next() < 0.5) continue;
              const acked = await acknowledge(address, alarm.id);
              if (acked?.ackedAt) confirmedAcks.set(alarm.id, acked.ackedAt);
            }
          } catch {
            // The daemon may be mid-start; the next poll tries again.
          }
        }
        await sleep(random.int(50, 250));
      }
      if (address === null) killedWhileStarting += 1;
      const before = readCommitted(dbPath);
      await daemon.kill9();
      expect(daemon.otherStdout, `round ${round}: non-JSON output`).toEqual([]);
      const after = readCommitted(dbPath);
      if (before) {
        expect(after, `round ${round}: database unreadable after the kill`).not.toBeNull();
        expectKept(before, after!, round);
        expectFaultsHaveAlarms(before, `round ${round}, before the kill`);
        expectFaultsHaveAlarms(after!, `round ${round}, after the kill`);
        seenBeforeKills.push(before);
      }
    }

    const acksDuringStorm = confirmedAcks.size;
    expect(acksDuringStorm, 'acknowledgements made while the storm and the kills went on').toBeGreaterThan(0);

    // The storm passes (the decoder restarts calm); a last start drains the outbox.
    feeder.switchTo(calmScenario({ loops: LOOPS, seed: SEED }));
    const last = spawnDaemon(configFile);
    const address = await last.waitForAddress(20_000);
    const drainDeadline = Date.now() + 60_000;
    let final: Committed | null = null;
    let deliveredByThen = new Set<string>();
    let quietSince: number | null = null;
    while (Date.now() < drainDeadline) {
      // Acknowledge everything left, so repeats stop and the outbox can run dry.
      try {
        for (const alarm of await activeAlarms(address)) {
          if (alarm.state === 'unacknowledged' || alarm.state === 'returned-unacknowledged') {
            const acked = await acknowledge(address, alarm.id);
            if (acked?.ackedAt) confirmedAcks.set(alarm.id, acked.ackedAt);
          }
        }
      } catch {
        // try again on the next pass
      }
      // Mail seen first, then the outbox: whatever had arrived was queued before this read.
      deliveredByThen = new Set([...smtp.byMessageId.keys()].map(bareMessageId));
      final = readCommitted(dbPath);
      const quiet = final !== null && final.pendingNotices === 0 && final.outbox.every((r) => r.status !== 'pending');
      if (quiet) quietSince ??= Date.now();
      else quietSince = null;
      if (quietSince !== null && Date.now() - quietSince > 1500) break;
      await sleep(200);
    }
    expect(last.isRunning()).toBe(true);
    await last.terminate();
    expect(final, 'the database after the storm').not.toBeNull();
    const pending = final!.outbox.filter((r) => r.status === 'pending');
    expect(pending, 'mail still waiting after the drain').toEqual([]);

    // The storm really happened and really was cut short, or the checks below prove nothing.
    expect(final!.stateChanges.length).toBeGreaterThan(LOOPS);
    expect(final!.alarms.length).toBeGreaterThan(3);
    expect(seenBeforeKills.length).toBeGreaterThanOrEqual(ROUNDS - 1);
    // How many kills landed during start-up varies with the machine's speed: logged, not asserted.
    console.info(
      `kill -9 storm: ${ROUNDS} kills (${killedWhileStarting} before the web server listened); ${final!.stateChanges.length} state changes, ` +
        `${final!.alarms.length} alarms, ${confirmedAcks.size} acknowledged by token (${acksDuringStorm} during the storm), ${final!.outbox.length} mails queued, ` +
        `${smtp.messages.length} deliveries (${smtp.messages.length - smtp.byMessageId.size} repeats of a Message-ID)`,
    );
    expect(final!.audit.some((a) => a.action === 'repeat' || a.action === 'escalation-step')).toBe(true);

    expectFaultsHaveAlarms(final!, 'after the storm');
    // Whatever was committed before any kill is still there at the end.
    for (const [i, before] of seenBeforeKills.entries()) expectKept(before, final!, i + 1);

    // Every message the outbox ever held reached the SMTP server at least once (counted by Message-ID),
    // but for reminders dropped unsent because their alarms were acknowledged first (issue 16 item 4),
    // each of which left a mail-dropped audit row.
    const delivered = deliveredByThen;
    const dropped = final!.outbox.filter((r) => r.status === 'dropped');
    for (const row of dropped) {
      for (const id of JSON.parse(row.alarm_ids_json) as number[]) {
        expect(final!.audit.some((a) => a.action === 'mail-dropped' && a.alarm_id === id), `mail-dropped audit for ${row.subject}`).toBe(true);
      }
    }
    const droppedIds = new Set(dropped.map((r) => bareMessageId(r.message_id)));
    const everQueued = new Set([...seenBeforeKills.flatMap((c) => c.outbox), ...final!.outbox].map((r) => bareMessageId(r.message_id)));
    const missing = [...everQueued].filter((id) => !delivered.has(id) && !droppedIds.has(id));
    expect(missing, 'queued but never delivered').toEqual([]);
    // And nothing arrived that the outbox never held.
    expect([...delivered].filter((id) => !everQueued.has(id))).toEqual([]);

    // An acknowledgement the API confirmed survived every kill.
    const alarms = new Map(final!.alarms.map((a) => [a.id, a]));
    for (const [id, ackedAt] of confirmedAcks) expect(alarms.get(id)?.acked_at, `alarm ${id}`).toBe(ackedAt);

    // No reminder or escalation step was queued for an alarm after it had been acknowledged.
    const late = final!.audit.filter((a) => {
      if (a.action !== 'repeat' && a.action !== 'escalation-step') return false;
      const ackedAt = a.alarm_id === null ? null : (alarms.get(a.alarm_id)?.acked_at ?? null);
      return ackedAt !== null && a.at > ackedAt;
    });
    expect(late, 'reminders queued after acknowledgement').toEqual([]);
    // Nor does any mail about a single alarm, written after its acknowledgement, still call it unacknowledged.
    const outboxById = new Map(final!.outbox.map((r) => [bareMessageId(r.message_id), r]));
    const misleading = smtp.messages.filter((m) => {
      const row = outboxById.get(bareMessageId(m.messageId ?? ''));
      const ids = row ? (JSON.parse(row.alarm_ids_json) as number[]) : [];
      if (!row || ids.length !== 1) return false;
      const ackedAt = alarms.get(ids[0]!)?.acked_at ?? null;
      return ackedAt !== null && row.created_at > ackedAt && /, not acknowledged$/.test(m.subject ?? '');
    });
    expect(misleading.map((m) => m.subject)).toEqual([]);
  }, 170_000);
});
