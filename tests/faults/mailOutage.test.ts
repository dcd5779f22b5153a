import { join } from 'node:path';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { bareMessageId, readCommitted } from './fixtures/dbSnapshot.js';
import { faultSiteYaml } from './fixtures/siteYaml.js';
import { freePort } from '../helpers/freePort.js';
import { startSmtpCounter, type SmtpCounter } from './fixtures/smtpCounter.js';

/**
 * The mail server away for a simulated hour, then back. The monitor runs in-process against a real
 * SMTP port on 127.0.0.1 that first refuses connections and later has a real smtp-server behind it.
 * Time is simulated: the monitor's `now` is a counter the test moves in 5 s steps, and its repeating
 * timers are frozen (vitest fake setInterval) so the test alone decides when each round runs.
 *
 * Promises checked (issue 3, with the config defaults): first retry within 30 s, retries capped at
 * 15 min, "mail failing" after repeated failures and cleared when mail flows, nothing lost. Issue 16
 * item 4 tightens the cap while the server cannot be reached: the oldest waiting mail tries again at
 * least every 30 s, so mail flows within 30 s of the server's return.
 */
const T0 = Date.UTC(2026, 0, 21, 2, 0, 0); // 02:00 UTC, a January night
const STEP_MS = 5000;
const OUTAGE_MS = 3_600_000;
const FIRST_RETRY_WITHIN_MS = 30_000;
const RETRY_CAP_MS = 15 * 60_000;
const LINK_RETRY_CAP_MS = 30_000;

let tmp: TempDir;
let smtpPort: number;
let smtp: SmtpCounter | null = null;
let monitor: Monitor | null = null;
let nowMs = T0;

beforeAll(async () => {
  vi.useFakeTimers({ toFake: ['setInterval', 'clearInterval'] });
  tmp = makeTempDir('pw-faults-mail-');
  smtpPort = await freePort();
  const config = parseConfig(
    faultSiteYaml({
      // No decoder is plugged in: it goes offline, which is trouble worth mailing about.
      port: join(tmp.dir, 'no-decoder-here'),
      loops: 2,
      dbPath: join(tmp.dir, 'data', 'brackenfold.db'),
      smtpPort,
    }),
  );
  monitor = await startMonitor({ config, configDir: tmp.dir, logger: pino({ level: 'silent' }), now: () => nowMs, listen: false });
});

afterAll(async () => {
  await monitor?.stop('test over', 3000);
  vi.useRealTimers();
  await smtp?.close();
  tmp?.cleanup();
});

/** One scheduler round as the daemon's timers would run it, at simulated time `nowMs`. */
async function step(): Promise<void> {
  nowMs += STEP_MS;
  monitor!.core.tick(nowMs);
  await monitor!.runNotifications();
}

async function mailHealth(): Promise<{ ok: boolean; reason: string | null }> {
  const response = await monitor!.web.inject({ method: 'GET', url: '/healthz' });
  const body = response.json() as { checks: Array<{ name: string; ok: boolean; reason: string | null }> };
  return body.checks.find((c) => c.name === 'mail')!;
}

/** Attempt times per message, from the audit trail's mail-failed rows and the outbox's sent time. */
function attemptsBySubject(dbPath: string): Map<string, number[]> {
  const committed = readCommitted(dbPath)!;
  const bySubject = new Map<string, number[]>();
  const seen = new Set<string>();
  for (const row of committed.audit) {
    if (row.action !== 'mail-failed' || row.note === null) continue;
    const match = /^(.*): attempt (\d+) failed/.exec(row.note);
    if (!match) continue;
    const key = `${match[1]}#${match[2]}`;
    if (seen.has(key)) continue; // one row per alarm the mail is about
    seen.add(key);
    const list = bySubject.get(match[1]!) ?? [];
    list.push(Date.parse(row.at));
    bySubject.set(match[1]!, list);
  }
  return bySubject;
}

describe('mail server away for an hour, then back (real SMTP port on loopback, simulated clock)', () => {
  it('queues everything, raises and clears "mail failing", retries as promised and loses nothing', async () => {
    const dbPath = monitor!.store.path;
    let failingRaisedAt: number | null = null;
    while (nowMs - T0 < OUTAGE_MS) {
      await step();
      if (failingRaisedAt === null && monitor!.core.openAlarms().some((a) => a.condition === 'mail-failing' && a.active)) failingRaisedAt = nowMs;
    }
    // The hour without mail: something to say, nothing said, and the monitor knows it.
    const during = readCommitted(dbPath)!;
    expect(during.outbox.length).toBeGreaterThanOrEqual(3); // started, offline, escalation/repeat, mail failing …
    expect(during.outbox.every((r) => r.status === 'pending')).toBe(true);
    expect(failingRaisedAt, '"mail failing" raised during the outage').not.toBeNull();
    expect(await mailHealth()).toMatchObject({ ok: false });
    expect(monitor!.worker.isFailing()).toBe(true);

    // The server comes back on the same port.
    smtp = await startSmtpCounter(smtpPort);
    const backAt = nowMs;
    let deliveredAt: number | null = null;
    while (nowMs - backAt < RETRY_CAP_MS + 5 * 60_000) {
      await step();
      const now = readCommitted(dbPath)!;
      if (deliveredAt === null && smtp.messages.length > 0) deliveredAt = nowMs;
      if (now.pendingNotices === 0 && now.outbox.every((r) => r.status !== 'pending') && !monitor!.worker.isFailing()) break;
    }
    const after = readCommitted(dbPath)!;

    // Nothing lost: every row ever queued was sent, and each reached the server (by Message-ID) ...
    const sent = after.outbox.filter((r) => r.status === 'sent');
    const delivered = new Set([...smtp.byMessageId.keys()].map(bareMessageId));
    expect(sent.map((r) => bareMessageId(r.message_id)).filter((id) => !delivered.has(id))).toEqual([]);
    // ... or, since issue 16 item 4, was a reminder made obsolete by a later state and dropped unsent, with
    // an audit row saying so: here the "mail failing" reminders, that alarm being back to normal by then.
    const dropped = after.outbox.filter((r) => r.status !== 'sent');
    for (const row of dropped) {
      expect(row.status, row.subject).toBe('dropped');
      expect(row.subject).toMatch(/not acknowledged$/);
      const alarmIds = JSON.parse(row.alarm_ids_json) as number[];
      for (const id of alarmIds) {
        expect(after.alarms.find((a) => a.id === id)?.state, `alarm ${id} of dropped ${row.subject}`).not.toBe('unacknowledged');
        expect(after.audit.some((a) => a.action === 'mail-dropped' && a.alarm_id === id && a.note?.startsWith(row.subject)), `mail-dropped audit for ${row.subject}`).toBe(true);
      }
    }
    for (const row of during.outbox) expect(after.outbox.find((r) => r.id === row.id)?.message_id).toBe(row.message_id);

    // Mail flowed again within one capped retry interval of the server's return.
    expect(deliveredAt).not.toBeNull();
    expect(deliveredAt! - backAt).toBeLessThanOrEqual(RETRY_CAP_MS + STEP_MS);
    expect(deliveredAt! - backAt, 'first delivery after the return (issue 16 item 4)').toBeLessThanOrEqual(LINK_RETRY_CAP_MS + STEP_MS);

    // "Mail failing" was raised as system trouble, and cleared once mail flowed.
    const mailFailing = after.alarms.filter((a) => a.condition === 'mail-failing');
    expect(mailFailing).toHaveLength(1);
    expect(mailFailing[0]).toMatchObject({ priority: 'system', active: 0 });
    expect(Date.parse(mailFailing[0]!.cleared_at!)).toBeGreaterThanOrEqual(backAt);
    expect(await mailHealth()).toEqual({ name: 'mail', ok: true, reason: null });
    // Everyone concerned heard about the failing mail once it worked again.
    expect(smtp.messages.some((m) => /mail failing/i.test(m.subject ?? ''))).toBe(true);

    // Retries spaced as promised: the first within 30 s, none further apart than 15 min.
    const attempts = attemptsBySubject(dbPath);
    const started = [...attempts.entries()].find(([subject]) => /started/i.test(subject));
    expect(started, `attempts for the "monitoring started" mail among ${[...attempts.keys()].join(' | ')}`).toBeDefined();
    const times = started![1];
    expect(times.length).toBeGreaterThanOrEqual(5);
    const gaps = times.slice(1).map((t, i) => t - times[i]!);
    expect(gaps[0]).toBeLessThanOrEqual(FIRST_RETRY_WITHIN_MS + STEP_MS);
    for (const gap of gaps) expect(gap).toBeLessThanOrEqual(RETRY_CAP_MS + STEP_MS);
    // The server was unreachable all hour: the oldest mail never waited more than 30 s between tries.
    for (const gap of gaps) expect(gap).toBeLessThanOrEqual(LINK_RETRY_CAP_MS + STEP_MS);
    // Backing off, not hammering: later gaps are longer than the first.
    expect(gaps.at(-1)!).toBeGreaterThan(gaps[0]!);
    console.info(
      `mail outage: ${during.outbox.length} mails queued during the hour, all ${after.outbox.length} delivered; ` +
        `"mail failing" raised ${(failingRaisedAt! - T0) / 1000} s in; first mail's retry gaps (s): ${gaps.map((g) => g / 1000).join(', ')}`,
    );
  }, 60_000);
});
