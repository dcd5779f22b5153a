import { afterEach, describe, expect, it } from 'vitest';
import type { Database } from 'better-sqlite3';
import type { NoticeKind } from '../../src/alarms/alarmTypes.js';
import { flushDigests } from '../../src/notify/flushDigests.js';
import { MailSendError } from '../../src/notify/mailSendError.js';
import { createSmtpTransport, type MailSendResult, type MailTransport } from '../../src/notify/mailTransport.js';
import { queueNotices } from '../../src/notify/noticeQueue.js';
import { createOutboxWorker, type OutboxWorkerOptions } from '../../src/notify/outboxWorker.js';
import { silentLogger } from '../../src/notify/notifyLogger.js';
import { enqueueOutbox, getOutboxRowByMessageId, type OutboxRow } from '../../src/store/outboxRepo.js';
import { freePort } from '../helpers/freePort.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { settings } from './helpers/fixtures.js';
import { insertAlarm, openTestDb, updateAlarm, type TestDb } from './helpers/notifyDb.js';

/**
 * The outbox after an outage (issue 16 item 4), one rule per case, against a real SQLite file and,
 * where the network matters, a real SMTP server on 127.0.0.1 that starts on a port which refused
 * connections a moment before. Time is a counter the test moves.
 */
const t0 = Date.parse('2026-12-01T03:00:00.000Z');

let t: TestDb | undefined;
const sinks: SmtpSink[] = [];
const transports: MailTransport[] = [];
afterEach(async () => {
  for (const tr of transports.splice(0)) tr.close();
  for (const s of sinks.splice(0)) await s.close();
  t?.cleanup();
  t = undefined;
});

function smtpTo(port: number): MailTransport {
  const transport = createSmtpTransport(
    { host: '127.0.0.1', port, secure: false, user: 'monitor', pass: 's3cret-pass', require_tls: false, timeout: 5_000 },
    {},
  );
  transports.push(transport);
  return transport;
}

/** One mail to `contactId` about a fresh alarm (or `alarmId`), carrying one notice of `kind`; returns its Message-ID. */
function queueMail(db: Database, contactId: string, at: number, kind: NoticeKind = 'raised', alarmId?: number): string {
  const id = alarmId ?? insertAlarm(db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: at });
  queueNotices(db, { kind: 'notify', alarmId: id, contactIds: [contactId], notice: kind, actor: null, note: null }, at, 0);
  const [messageId] = flushDigests(db, at, settings()).messageIds;
  return messageId!;
}

function worker(db: Database, transport: Pick<MailTransport, 'send' | 'description'>, clock: { now: number }, extra: Partial<OutboxWorkerOptions> = {}) {
  return createOutboxWorker({
    db,
    transport,
    now: () => clock.now,
    failingAfter: 3,
    retryFirstMs: 15_000,
    retryMaxMs: 900_000,
    jitterRatio: 0,
    onFailing: () => undefined,
    onRecovered: () => undefined,
    logger: silentLogger,
    ...extra,
  });
}

/** A server that refuses the messages named (this message, not the link) and takes every other one. */
function refusing(messageIds: Set<string>, delivered: string[]): Pick<MailTransport, 'send' | 'description'> {
  return {
    description: 'scripted server',
    async send(row: OutboxRow): Promise<MailSendResult> {
      if (messageIds.has(row.messageId)) throw new MailSendError('550 message refused', 'message', 550, '550 no');
      delivered.push(row.messageId);
      return { accepted: row.to, response: '250 ok' };
    },
  };
}

describe('outbox backlog after an outage (issue 16 item 4)', () => {
  it('the first mail the server takes releases the held backlog in the same run, oldest first, and per mailbox nothing overtakes', async () => {
    t = openTestDb();
    const port = await freePort(); // nothing listens yet: connection refused
    const clock = { now: t0 };
    const w = worker(t.db, smtpTo(port), clock);
    const a = queueMail(t.db, 'office', t0);
    expect(await w.runOnce()).toMatchObject({ sent: 0, failed: 1 });
    expect(getOutboxRowByMessageId(t.db, a)!.nextAttemptAt).toBe(t0 + 15_000);

    // The server is back, but A still waits out its retry. Newer mail to the same mailbox waits behind it.
    const sink = await startSmtpSink({ port });
    sinks.push(sink);
    clock.now = t0 + 5_000;
    const c = queueMail(t.db, 'office', clock.now);
    expect(await w.runOnce()).toMatchObject({ sent: 0, failed: 0 });
    expect(sink.messages).toEqual([]);

    // Mail to another mailbox goes at once; its success releases A, and A goes before C.
    clock.now = t0 + 10_000;
    const s = queueMail(t.db, 'vet', clock.now);
    expect(await w.runOnce()).toEqual({ sent: 3, failed: 0, deferred: 0, dropped: 0 });
    expect(sink.messages.map((m) => m.messageId)).toEqual([s, a, c]);
    expect(w.nextDueAt()).toBeNull();
  });

  it('a message the server refused holds no later mail to the same mailbox back, and is not released by a success', async () => {
    t = openTestDb();
    const clock = { now: t0 };
    const delivered: string[] = [];
    const refused = queueMail(t.db, 'office', t0);
    const w = worker(t.db, refusing(new Set([refused]), delivered), clock);
    expect(await w.runOnce()).toMatchObject({ sent: 0, failed: 1 });
    expect(getOutboxRowByMessageId(t.db, refused)).toMatchObject({ refused: true, nextAttemptAt: t0 + 15_000 });

    clock.now = t0 + 5_000;
    const later = queueMail(t.db, 'office', clock.now);
    expect(await w.runOnce()).toEqual({ sent: 1, failed: 0, deferred: 0, dropped: 0 });
    expect(delivered).toEqual([later]);
    // Keeps its own back-off: a success proves the link, not that this message is now welcome.
    expect(getOutboxRowByMessageId(t.db, refused)).toMatchObject({ status: 'pending', attempts: 1, nextAttemptAt: t0 + 15_000 });
  });

  it('a backlog larger than one batch drains in one run while mail flows', async () => {
    t = openTestDb();
    const sink = await startSmtpSink();
    sinks.push(sink);
    const clock = { now: t0 };
    const ids = Array.from({ length: 7 }, (_, i) => queueMail(t!.db, i % 2 === 0 ? 'office' : 'oncall', t0));
    const w = worker(t.db, smtpTo(sink.port), clock, { batchSize: 2 });
    expect(await w.runOnce()).toMatchObject({ sent: 7, failed: 0 });
    expect(sink.messages.map((m) => m.messageId)).toEqual(ids);
  });

  it('drops a reminder whose alarms no longer wait for an acknowledgement, with an audit row; sends every other mail', async () => {
    t = openTestDb();
    const port = await freePort();
    const clock = { now: t0 };
    const w = worker(t.db, smtpTo(port), clock);
    const alarm = () => insertAlarm(t!.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    const acked = alarm();
    const waiting = alarm();
    const latchedGone = alarm(); // a latched alarm: cleared, it stays 'unacknowledged'
    const returned = alarm();
    // Queued during the outage: reminders about each, and the first mail about the acknowledged one.
    const mails = {
      raisedAboutAcked: queueMail(t.db, 'office', t0, 'raised', acked),
      repeatAboutAcked: queueMail(t.db, 'office', t0, 'repeat', acked),
      escalationAboutAcked: queueMail(t.db, 'oncall', t0, 'escalated', acked),
      repeatAboutWaiting: queueMail(t.db, 'office', t0, 'repeat', waiting),
      repeatAboutLatchedGone: queueMail(t.db, 'office', t0, 'repeat', latchedGone),
      repeatAboutReturned: queueMail(t.db, 'vet', t0, 'repeat', returned),
      // As the estate board queues its reminders: about alarms kept in memory, so about no alarm row.
      reminderAboutNoAlarm: '<estate-reminder@pairwatch.ridgeway.example>',
    };
    enqueueOutbox(t.db, {
      messageId: mails.reminderAboutNoAlarm, kind: 'notice', priority: 'alarm', from: 'pairwatch <monitor@ridgeway.example>', to: ['office@ridgeway.example'],
      subject: 'Estate: Ridgeway Farm — tripped, not acknowledged', text: 'Still not acknowledged.', html: '<p>Still not acknowledged.</p>', headers: {}, alarmIds: [], reminder: true,
    }, t0);
    expect(await w.runOnce()).toMatchObject({ sent: 0, failed: 1 });
    // Meanwhile, from the board: one acknowledged; one latched alarm cleared (still escalating until
    // acknowledged); one non-latched alarm back to normal (returned-unacknowledged: no more reminders).
    clock.now = t0 + 60_000;
    updateAlarm(t.db, acked, { state: 'acknowledged', ackedAt: clock.now, ackedBy: 'ann' });
    updateAlarm(t.db, latchedGone, { active: false, clearedAt: clock.now });
    updateAlarm(t.db, returned, { state: 'returned-unacknowledged', active: false, clearedAt: clock.now });

    const sink = await startSmtpSink({ port });
    sinks.push(sink);
    clock.now = t0 + 90_000;
    expect(await w.runOnce()).toEqual({ sent: 4, failed: 0, deferred: 0, dropped: 3 });
    expect(sink.messages.map((m) => m.messageId)).toEqual([mails.raisedAboutAcked, mails.repeatAboutWaiting, mails.repeatAboutLatchedGone, mails.reminderAboutNoAlarm]);
    for (const id of [mails.repeatAboutAcked, mails.escalationAboutAcked, mails.repeatAboutReturned]) {
      expect(getOutboxRowByMessageId(t.db, id)).toMatchObject({ status: 'dropped', reminder: true });
    }
    const audit = t.db.prepare("SELECT alarm_id, at, note FROM audit WHERE action = 'mail-dropped' ORDER BY id").all() as Array<{ alarm_id: number; at: string; note: string }>;
    expect(audit.map((a) => a.alarm_id)).toEqual([acked, acked, returned]);
    expect(audit[0]!.at).toBe(new Date(t0 + 90_000).toISOString());
    expect(audit[0]!.note).toMatch(new RegExp(`alarm ${acked} acknowledged`));
    expect(audit[2]!.note).toMatch(new RegExp(`alarm ${returned} returned-unacknowledged`));
    expect(w.nextDueAt()).toBeNull();
  });

  it('marks only mail of repeats and escalations as reminders', () => {
    t = openTestDb();
    const id = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    const reminderOf = (messageId: string) => getOutboxRowByMessageId(t!.db, messageId)!.reminder;
    expect(reminderOf(queueMail(t.db, 'office', t0, 'repeat', id))).toBe(true);
    expect(reminderOf(queueMail(t.db, 'office', t0, 'escalated', id))).toBe(true);
    for (const kind of ['raised', 'acknowledged', 'cleared', 'shelved', 'unshelved'] as const) {
      expect(reminderOf(queueMail(t.db, 'office', t0, kind, id)), kind).toBe(false);
    }
    // A digest with news in it is not a reminder, however many repeats ride along.
    queueNotices(t.db, { kind: 'notify', alarmId: id, contactIds: ['office'], notice: 'repeat', actor: null, note: null }, t0, 0);
    queueNotices(t.db, { kind: 'notify', alarmId: id, contactIds: ['office'], notice: 'cleared', actor: null, note: null }, t0, 0);
    const [mixed] = flushDigests(t.db, t0, settings()).messageIds;
    expect(reminderOf(mixed!)).toBe(false);
  });
});
