import { join } from 'node:path';
import type { ParsedMail } from 'mailparser';
import pino from 'pino';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { freePort } from '../helpers/freePort.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { bareMessageId, readCommitted } from './fixtures/dbSnapshot.js';
import { faultSiteYaml } from './fixtures/siteYaml.js';
import { startSmtpCounter, type SmtpCounter } from './fixtures/smtpCounter.js';

/**
 * Issue 16 item 4: after an SMTP outage the backlog drained slowly and out of order — each row waited
 * out its own back-off while newer mail went first, "back to normal" arrived before the alarm it
 * cleared, reminders for alarms already acknowledged or back to normal still went out, and /healthz
 * said mail was fine while old alarm mail was still waiting.
 *
 * The monitor runs in-process on a simulated clock (5 s rounds; its repeating timers frozen) against a
 * real SMTP port on 127.0.0.1: refused during the outage, the shared smtp-server sink behind it
 * afterwards. Alarms enter through the alarm engine's own inputs (raise, acknowledge, clear), as the
 * site step and the board would feed them. Drain speed is counted in scheduler rounds after the
 * server's return, not in wall-clock time.
 */
const T0 = Date.UTC(2026, 0, 24, 1, 0, 0);
const STEP_MS = 5000;
const GROUP_WINDOW_MS = 10_000;

let tmp: TempDir;
let smtpPort: number;
let smtp: SmtpCounter | null = null;
let monitor: Monitor | null = null;
let nowMs = T0;

async function start(options: { failingAfter?: number } = {}): Promise<void> {
  vi.useFakeTimers({ toFake: ['setInterval', 'clearInterval'] });
  tmp = makeTempDir('pw-faults-backlog-');
  smtpPort = await freePort();
  nowMs = T0;
  const config = parseConfig(
    faultSiteYaml({
      port: join(tmp.dir, 'no-decoder-here'),
      loops: 3,
      dbPath: join(tmp.dir, 'data', 'brackenfold.db'),
      smtpPort,
      secondStepAfter: '1m',
      repeatEvery: '1m',
      maxRepeats: 10,
      groupWindow: `${GROUP_WINDOW_MS / 1000}s`,
      retryFirst: '15s',
      retryMax: '15m',
      failingAfter: options.failingAfter ?? 3,
    }),
  );
  monitor = await startMonitor({ config, configDir: tmp.dir, logger: pino({ level: 'silent' }), now: () => nowMs, listen: false });
}

afterEach(async () => {
  await monitor?.stop('test over', 3000);
  monitor = null;
  vi.useRealTimers();
  await smtp?.close();
  smtp = null;
  tmp?.cleanup();
});

/** One scheduler round as the daemon's timers would run it, at simulated time `nowMs`. */
async function step(): Promise<void> {
  nowMs += STEP_MS;
  monitor!.core.tick(nowMs);
  await monitor!.runNotifications();
}

async function mailHealth(): Promise<{ name: string; ok: boolean; reason: string | null }> {
  const response = await monitor!.web.inject({ method: 'GET', url: '/healthz' });
  return (response.json() as { checks: Array<{ name: string; ok: boolean; reason: string | null }> }).checks.find((c) => c.name === 'mail')!;
}

const raiseTrip = (loopId: string) =>
  monitor!.core.alarmAction({ kind: 'raise', source: loopId, loopId, condition: 'tripped', latched: false, policy: 'default' }, nowMs);

const addressesOf = (message: ParsedMail): string[] => [message.to].flat().flatMap((to) => to?.value ?? []).map((a) => a.address!);

/** Wording of a repeat ("Still not acknowledged after …") or an escalation ("Nobody has acknowledged this yet …"). */
const REMINDER_WORDS = /Still not acknowledged|Nobody has acknowledged/;

describe('the mail backlog after an SMTP outage (issue 16 item 4)', () => {
  it('drains at once when a send succeeds, in the order raised per contact, without stale reminders', async () => {
    await start();
    const dbPath = monitor!.store.path;
    // A four-minute outage: two trips 30 s apart, reminders and the second step falling due meanwhile.
    while (nowMs - T0 < 30_000) await step();
    raiseTrip('bldg-01');
    while (nowMs - T0 < 60_000) await step();
    raiseTrip('bldg-02');
    while (nowMs - T0 < 180_000) await step();
    // Three minutes in: somebody deals with everything from the board; bldg-02 is back to normal.
    monitor!.core.alarmAction({ kind: 'clear', source: 'bldg-02', condition: 'tripped' }, nowMs);
    for (const alarm of monitor!.core.openAlarms()) {
      monitor!.core.alarmAction({ kind: 'ack', alarmId: alarm.id, actor: 'ann', note: 'seen on the board' }, nowMs);
    }
    const handled = new Set(readCommitted(dbPath)!.alarms.map((a) => a.id));
    while (nowMs - T0 < 240_000) await step();
    const during = readCommitted(dbPath)!;
    expect(during.outbox.filter((r) => r.status === 'pending').length).toBeGreaterThanOrEqual(5);
    expect(monitor!.worker.isFailing()).toBe(true);
    expect((await mailHealth()).ok).toBe(false);

    // The server comes back on the same port; count rounds until the first delivery.
    smtp = await startSmtpCounter(smtpPort);
    const backAt = nowMs;
    // New trouble just as it returns: its mail must still queue behind the older mail to the same people.
    raiseTrip('bldg-03');
    let rounds = 0;
    while (smtp.messages.length === 0 && rounds < 200) {
      await step();
      rounds += 1;
    }
    // During the outage the oldest mail tried the server at least every 30 s (so within 6 rounds of 5 s, and one for the timing grid).
    expect(rounds).toBeLessThanOrEqual(30_000 / STEP_MS + 1);
    // The first success released the whole backlog: nothing queued before the return waits after that round.
    expect(readCommitted(dbPath)!.outbox.filter((r) => r.status === 'pending' && Date.parse(r.created_at) < backAt)).toEqual([]);
    for (let i = 0; i < 6; i++) await step(); // let "back to normal" for mail failing and the last notices through

    const after = readCommitted(dbPath)!;
    const rowOf = new Map(after.outbox.map((r) => [bareMessageId(r.message_id), r]));
    const byMailbox = new Map<string, ParsedMail[]>();
    for (const message of smtp.messages) {
      expect(rowOf.get(bareMessageId(message.messageId ?? '')), `delivered ${message.subject} is an outbox row`).toBeDefined();
      for (const address of addressesOf(message)) byMailbox.set(address, [...(byMailbox.get(address) ?? []), message]);
    }
    expect([...byMailbox.keys()].sort()).toEqual(['office@brackenfold.example', 'shepherd@brackenfold.example']);

    // In the order raised, per contact: each mailbox received its messages in outbox (queueing) order.
    const idOf = (m: ParsedMail) => rowOf.get(bareMessageId(m.messageId ?? ''))!.id;
    for (const [address, messages] of byMailbox) {
      const ids = messages.map(idOf);
      expect(ids, `order at ${address}`).toEqual([...ids].sort((a, b) => a - b));
    }
    // "Back to normal" never before the alarm it clears, read from the mail as the office reads it.
    const office = byMailbox.get('office@brackenfold.example')!;
    const firstAt = (pattern: RegExp) => office.findIndex((m) => pattern.test(`${m.subject}\n${m.text}`));
    expect(firstAt(/Monitor — mail failing$/m)).toBeGreaterThanOrEqual(0);
    expect(firstAt(/Monitor — mail failing$/m)).toBeLessThan(firstAt(/Monitor — back to normal$/m));
    expect(firstAt(/Calf pens/)).toBeGreaterThanOrEqual(0);
    expect(firstAt(/Calf pens/)).toBeLessThan(firstAt(/Calf pens[\s\S]*back to normal/));
    // The trip raised as the server returned came after everything older to the same mailbox.
    expect(office.at(-2)!.subject).toMatch(/Grain loft — tripped$/);

    // No stale reminders: every alarm but bldg-03's was acknowledged (bldg-02's also back to normal)
    // before the server returned, so no delivered mail may only remind a mailbox of those alarms. A mail
    // that also brings that mailbox news (an alarm it had not been told of) goes whole, as composed.
    const told = new Map<string, Set<number>>();
    const stale: string[] = [];
    for (const message of smtp.messages) {
      const alarmIds = JSON.parse(rowOf.get(bareMessageId(message.messageId ?? ''))!.alarm_ids_json) as number[];
      for (const address of addressesOf(message)) {
        const known = told.get(address) ?? new Set<number>();
        const news = alarmIds.some((id) => !known.has(id));
        if (REMINDER_WORDS.test(message.text ?? '') && alarmIds.every((id) => handled.has(id)) && !news) stale.push(`${address}: ${message.subject}`);
        for (const id of alarmIds) known.add(id);
        told.set(address, known);
      }
    }
    expect(stale).toEqual([]);
    // ... and they were not silently lost either: each dropped reminder is kept as a row and left an audit row.
    const dropped = after.outbox.filter((r) => r.status === 'dropped');
    expect(dropped.length).toBeGreaterThan(0);
    for (const row of dropped) {
      for (const id of JSON.parse(row.alarm_ids_json) as number[]) {
        expect(after.audit.some((a) => a.action === 'mail-dropped' && a.alarm_id === id && a.note?.startsWith(row.subject)), `audit for ${row.subject}`).toBe(true);
      }
    }
    // The acknowledgements themselves did go out, and nothing is left waiting.
    expect(smtp.messages.some((m) => /acknowledged/i.test(m.subject ?? ''))).toBe(true);
    expect(after.outbox.filter((r) => r.status === 'pending')).toEqual([]);
    expect(await mailHealth()).toEqual({ name: 'mail', ok: true, reason: null });
    console.info(
      `mail backlog: ${during.outbox.filter((r) => r.status === 'pending').length} mails waiting at the return; first delivery ${rounds} rounds ` +
        `(${(rounds * STEP_MS) / 1000} s) after it; ${smtp.messages.length} delivered, ${dropped.length} reminders dropped as obsolete`,
    );
  }, 60_000);

  it('/healthz reports mail unhealthy while anything older than the grouping window waits, even before "mail failing"', async () => {
    // failing_after 10: a short outage never raises "mail failing", so only the waiting mail can tell.
    await start({ failingAfter: 10 });
    await step(); // "monitoring started" is tried once and refused
    expect(monitor!.worker.isFailing()).toBe(false);
    const waiting = readCommitted(monitor!.store.path)!.outbox.filter((r) => r.status === 'pending');
    expect(waiting.length).toBeGreaterThan(0);
    const oldest = Date.parse(waiting[0]!.created_at);
    // Inside the grouping window waiting is normal.
    expect(nowMs - oldest).toBeLessThanOrEqual(GROUP_WINDOW_MS);
    expect(await mailHealth()).toEqual({ name: 'mail', ok: true, reason: null });
    while (nowMs - oldest <= GROUP_WINDOW_MS) await step();
    const late = await mailHealth();
    expect(late.ok).toBe(false);
    expect(late.reason).toMatch(/^\d+ messages? waiting, the oldest for 15 s$/);

    smtp = await startSmtpCounter(smtpPort);
    for (let i = 0; i < 8 && (await mailHealth()).ok === false; i++) await step();
    expect(await mailHealth()).toEqual({ name: 'mail', ok: true, reason: null });
    expect(readCommitted(monitor!.store.path)!.outbox.filter((r) => r.status === 'pending')).toEqual([]);
  }, 60_000);
});
