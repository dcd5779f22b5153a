import { afterEach, describe, expect, it } from 'vitest';
import type { ParsedMail } from 'mailparser';
import { CONDITION_TEXT } from '../../src/model/condition.js';
import { verifyAckToken } from '../../src/notify/ackToken.js';
import { flushDigests } from '../../src/notify/flushDigests.js';
import { createSmtpTransport, type MailTransport } from '../../src/notify/mailTransport.js';
import { queueNotices, type NotifyEffect } from '../../src/notify/noticeQueue.js';
import { createOutboxWorker } from '../../src/notify/outboxWorker.js';
import { silentLogger } from '../../src/notify/notifyLogger.js';
import { insertAlarm, openTestDb, updateAlarm, type TestDb } from './helpers/notifyDb.js';
import { secret, settings } from './helpers/fixtures.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';

const t0 = Date.parse('2026-12-01T03:00:00.000Z');
const WINDOW = 10_000;
const MIN = 60_000;

let t: TestDb | undefined;
let sink: SmtpSink | undefined;
let transport: MailTransport | undefined;
afterEach(async () => {
  transport?.close();
  await sink?.close();
  t?.cleanup();
  t = sink = transport = undefined;
});

function smtpTo(port: number): MailTransport {
  return createSmtpTransport(
    { host: '127.0.0.1', port, secure: false, user: 'monitor', pass_env: 'PW_TEST_SMTP_PASS', require_tls: false, timeout: 5_000 },
    { PW_TEST_SMTP_PASS: 's3cret-pass' },
  );
}

async function setup() {
  t = openTestDb();
  sink = await startSmtpSink();
  transport = smtpTo(sink.port);
  let clock = t0;
  const worker = createOutboxWorker({
    db: t.db,
    transport,
    now: () => clock,
    failingAfter: 3,
    retryFirstMs: 15_000,
    retryMaxMs: 900_000,
    onFailing: () => {},
    onRecovered: () => {},
    logger: silentLogger,
  });
  const s = settings();
  const db = t.db;
  return {
    db,
    setClock: (ms: number) => (clock = ms),
    notify(effect: Omit<NotifyEffect, 'kind' | 'actor' | 'note'> & Partial<NotifyEffect>) {
      db.transaction(() => queueNotices(db, { kind: 'notify', actor: null, note: null, ...effect }, clock, WINDOW))();
    },
    async deliver(): Promise<ParsedMail[]> {
      const before = sink!.messages.length;
      flushDigests(db, clock, s);
      await worker.runOnce();
      return sink!.messages.slice(before);
    },
  };
}

const header = (mail: ParsedMail, name: string) => mail.headers.get(name);
const ackLink = (text: string | undefined) => /https:\/\/monitor\.ridgeway\.example\/ack\/(\S+)/.exec(text ?? '')?.[1];

describe('notice mail through a real SMTP server (smtp-server, parsed with mailparser)', () => {
  it('carries the content, the priority subject, Auto-Submitted and a working acknowledge link', async () => {
    const h = await setup();
    const alarmId = insertAlarm(h.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    h.notify({ alarmId, contactIds: ['office'], notice: 'raised' });
    expect(await h.deliver()).toHaveLength(0); // the grouping window is still open
    h.setClock(t0 + WINDOW);
    const [mail] = await h.deliver();
    expect(mail).toBeDefined();
    expect(sink!.logins).toEqual(['monitor']);
    expect(sink!.envelopes[0]).toEqual(['office@ridgeway.example']);
    expect(mail!.subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped');
    expect(mail!.from?.value[0]?.address).toBe('monitor@ridgeway.example');
    expect(header(mail!, 'auto-submitted')).toBe('auto-generated'); // RFC 3834 §5
    expect(mail!.text).toContain(CONDITION_TEXT.tripped.check);
    expect(mail!.text).toContain('Pump house, north paddock');
    expect(mail!.html).toContain('Well pit — tripped');
    const token = ackLink(mail!.text);
    expect(verifyAckToken(token!, secret, t0 + WINDOW)).toMatchObject({ ok: true, alarmId });
    // The first mail became the alarm's thread.
    const thread = h.db.prepare('SELECT thread_message_id AS id FROM alarms WHERE id = ?').get(alarmId) as { id: string };
    expect(thread.id).toBe(mail!.messageId);
  });

  it('escalation, repeats, acknowledgement and clear all thread under the first mail', async () => {
    const h = await setup();
    const alarmId = insertAlarm(h.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    h.notify({ alarmId, contactIds: ['office'], notice: 'raised' });
    h.setClock(t0 + WINDOW);
    const [first] = await h.deliver();

    h.setClock(t0 + 20 * MIN);
    h.notify({ alarmId, contactIds: ['oncall'], notice: 'escalated' });
    h.setClock(t0 + 20 * MIN + WINDOW);
    const [escalated] = await h.deliver();
    expect(escalated!.to && 'value' in escalated!.to ? escalated!.to.value[0]?.address : null).toBe('oncall@ridgeway.example');
    expect(escalated!.inReplyTo).toBe(first!.messageId);
    expect(escalated!.text).toMatch(/Also told: +Farm office/);

    h.setClock(t0 + 50 * MIN);
    h.notify({ alarmId, contactIds: ['office', 'oncall'], notice: 'repeat' });
    h.setClock(t0 + 50 * MIN + WINDOW);
    const repeats = await h.deliver();
    expect(repeats).toHaveLength(2);
    for (const repeat of repeats) {
      expect(repeat.inReplyTo).toBe(first!.messageId);
      expect([repeat.references].flat()).toContain(first!.messageId);
      expect(repeat.messageId).not.toBe(first!.messageId);
      expect(ackLink(repeat.text)).toBeDefined();
    }

    h.setClock(t0 + 55 * MIN);
    updateAlarm(h.db, alarmId, { state: 'acknowledged', ackedAt: t0 + 55 * MIN, ackedBy: 'ann', note: 'Heater tripped, reset it' });
    h.notify({ alarmId, contactIds: ['office', 'oncall'], notice: 'acknowledged', actor: 'ann', note: 'Heater tripped, reset it' });
    h.setClock(t0 + 55 * MIN + WINDOW);
    const acks = await h.deliver();
    expect(acks).toHaveLength(2);
    for (const ack of acks) {
      expect(ack.subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped, acknowledged by ann');
      expect(ack.text).toContain('Heater tripped, reset it');
      expect(ack.inReplyTo).toBe(first!.messageId);
      expect(ackLink(ack.text)).toBeUndefined();
    }

    h.setClock(t0 + 90 * MIN);
    updateAlarm(h.db, alarmId, { state: 'normal', clearedAt: t0 + 90 * MIN, active: false });
    h.notify({ alarmId, contactIds: ['office', 'oncall'], notice: 'cleared' });
    h.setClock(t0 + 90 * MIN + WINDOW);
    const clears = await h.deliver();
    expect(clears.map((m) => m.subject)).toEqual(['[ALARM] Ridgeway Farm: Well pit — back to normal', '[ALARM] Ridgeway Farm: Well pit — back to normal']);
    for (const clear of clears) expect(clear.inReplyTo).toBe(first!.messageId);

    const ids = sink!.messages.map((m) => m.messageId);
    expect(new Set(ids).size).toBe(ids.length);
  });

  it('storm: a decoder going offline with 8 loops is one mail per contact', async () => {
    const h = await setup();
    for (let i = 0; i < 8; i++) {
      h.setClock(t0 + i * 500);
      const alarmId = insertAlarm(h.db, { loopId: `bay${i + 1}`, source: 'main', condition: 'offline', priority: 'trouble', raisedAt: t0 + i * 500 });
      h.notify({ alarmId, contactIds: ['office', 'oncall'], notice: 'raised' });
    }
    h.setClock(t0 + WINDOW);
    const mails = await h.deliver();
    expect(mails).toHaveLength(2);
    expect(sink!.envelopes.flat().sort()).toEqual(['office@ridgeway.example', 'oncall@ridgeway.example']);
    for (const mail of mails) {
      expect(mail.subject).toMatch(/^\[TROUBLE\] Ridgeway Farm: 8 conditions — /);
      for (let i = 1; i <= 8; i++) expect(mail.text).toContain(`Hay bay ${i} — decoder offline`);
      // One acknowledge link per condition.
      expect((mail.text ?? '').match(/\/ack\//g)).toHaveLength(8);
    }
  });
});
