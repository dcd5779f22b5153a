import type { ParsedMail } from 'mailparser';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { findInboxMessage, inboxOffset } from '../../src/store/inboxRepo.js';
import { insertUser } from '../../src/store/accountRepos.js';
import type { Condition } from '../../src/model/condition.js';
import { startDovecot, dovecotAvailable, type DovecotServer } from '../helpers/dovecot.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { bounceOf, openMailbox, rawMail, replyTo, waitUntil, type RawMail, type TestMailbox } from './fixtures/replyMail.js';
import { IMAP_PASS, IMAP_USER, MONITOR_FROM, OFFICE, SHEPHERD, imapEnv, sentTo, tokenOf, writeReplySite } from './fixtures/replySite.js';

/**
 * Acknowledging by replying to the alarm mail, end to end: the real monitor in-process, its reply
 * mailbox on a real Dovecot on 127.0.0.1, its mail through a real SMTP server on 127.0.0.1. Replies are
 * delivered into the mailbox by IMAP APPEND from the test's own IMAP session, which is also how the
 * test sees what the monitor did to each message (flags, folders). Everything is driven by events
 * (IDLE, RFC 2177, tells the monitor about each APPEND); the time limits only bound a hung test.
 */
const HUNG = 15_000;
const LOOP_NAMES: Record<string, string> = { 'lambing-shed': 'Lambing shed', 'feed-store': 'Feed store' };

let tmp: TempDir;
let dovecot: DovecotServer;
let smtp: SmtpSink;
let monitor: Monitor;
let mailbox: TestMailbox;
let configFile: string;

const quiet = pino({ level: process.env.PW_TEST_LOG ?? 'silent' });

async function start(): Promise<Monitor> {
  const m = await startMonitor({
    config: loadConfig(configFile),
    configDir: tmp.dir,
    logger: quiet,
    listen: false,
    announce: false,
    env: imapEnv(),
    // A long poll: only IDLE can make these tests pass in time.
    inbox: { pollMs: 600_000, retryFirstMs: 100, retryMaxMs: 400, failingAfter: 2 },
  });
  await waitUntil(() => m.inbox !== null && !m.inbox.isFailing() && watching(), HUNG, () => 'the monitor to open its reply mailbox');
  return m;
}

/** Dovecot's log shows a login for the monitor's mailbox. */
const watching = () => dovecot.log().includes(`user=<${IMAP_USER}>`);

beforeAll(async () => {
  tmp = makeTempDir('pw-reply-');
  mkdirSync(join(tmp.dir, 'data'));
  dovecot = await startDovecot({ user: IMAP_USER, pass: IMAP_PASS });
  smtp = await startSmtpSink({ auth: false });
  configFile = writeReplySite({ dir: tmp.dir, imapPort: dovecot.port, smtpPort: smtp.port, users: true });
  monitor = await start();
  mailbox = await openMailbox(dovecot);
}, 60_000);

afterAll(async () => {
  await mailbox?.close();
  await monitor?.stop('test over', 3000);
  await smtp?.close();
  await dovecot?.close();
  tmp?.cleanup();
});

interface RaisedAlarm {
  id: number;
  /** The alarm mail each contact got. */
  office: ParsedMail;
  shepherd: ParsedMail;
}

/** Raises an alarm as the classifier would and waits for the mail both contacts get. */
async function raise(loopId: string, condition: Condition): Promise<RaisedAlarm> {
  const before = smtp.messages.length;
  monitor.core.alarmAction({ kind: 'raise', source: loopId, loopId, condition, latched: true, policy: 'default' }, Date.now());
  const alarm = monitor.read.alarms('active').find((a) => a.loopId === loopId && a.condition === condition)!;
  await monitor.runNotifications();
  const mailTo = (address: string) => smtp.messages
      .slice(before)
      .find((m) => sentTo(m).includes(address) && tokenOf(m) !== '' && m.headers.get('auto-submitted') === 'auto-generated' && (m.subject ?? '').includes(LOOP_NAMES[loopId]!));
  await waitUntil(() => !!mailTo(OFFICE.email) && !!mailTo(SHEPHERD.email), HUNG, () => `alarm mail to both contacts; have ${smtp.messages.map((m) => m.subject).join(' | ')}`);
  return { id: alarm.id, office: mailTo(OFFICE.email)!, shepherd: mailTo(SHEPHERD.email)! };
}

/** Appends and waits until the monitor has shown its verdict on the message in the mailbox. */
async function deliver(mail: RawMail, until: '\\Flagged' | '\\Seen'): Promise<void> {
  await mailbox.append(mail);
  await waitUntil(
    async () => (await mailbox.list()).some((e) => e.messageId === mail.messageId && e.flags.has(until)),
    HUNG,
    () => `${mail.messageId} to be marked ${until}`,
  );
}

const verdictOf = (mail: RawMail) => findInboxMessage(monitor.store.db, mail.messageId);
const confirmations = () => smtp.messages.filter((m) => m.headers.get('auto-submitted') === 'auto-replied');
const acksOf = (alarmId: number) => monitor.read.alarm(alarmId)!.audit.filter((a) => a.action === 'acknowledge');

describe('reply inbox on a real Dovecot', () => {
  let first: RaisedAlarm;

  beforeAll(async () => {
    first = await raise('lambing-shed', 'tripped');
  });

  it('every alarm mail says how to acknowledge by reply, with its token in the subject tag, the body and Reply-To to the watched mailbox', () => {
    for (const mail of [first.office, first.shepherd]) {
      expect(mail.text).toContain('Reply with OK to acknowledge (you may add a note).');
      expect(mail.text).toContain(`Reference: ${tokenOf(mail)}`);
      expect(mail.replyTo?.value[0]?.address).toBe(IMAP_USER);
    }
    // One token per recipient: the office's mail cannot stand in for the shepherd's.
    expect(tokenOf(first.office)).not.toBe(tokenOf(first.shepherd));
  });

  describe('refused, left flagged for a person, never acted on', () => {
    it('a forged From without the token (it was only in the office\'s own mail) does nothing', async () => {
      const forged = replyTo(first.office, { from: `"Farm office" <${OFFICE.email}>`, words: 'OK', trimQuote: true, subject: 'Re: your alarm' });
      await deliver(forged, '\\Flagged');
      expect(verdictOf(forged)).toMatchObject({ verdict: 'refused', detail: expect.stringMatching(/^no-token/) });
    });

    it('a forged From with a made-up token does nothing', async () => {
      const real = tokenOf(first.office);
      const madeUp = `${real.slice(0, -4)}${real.endsWith('aaaa') ? 'bbbb' : 'aaaa'}`;
      const forged = replyTo(first.office, { from: OFFICE.email, words: 'OK', trimQuote: true, subject: `Re: alarm [ref ${madeUp}]` });
      await deliver(forged, '\\Flagged');
      expect(verdictOf(forged)).toMatchObject({ verdict: 'refused', detail: expect.stringMatching(/^token-forged/) });
    });

    it("a reply from the shepherd to the office's mail (its token was issued to the office) does nothing", async () => {
      const other = replyTo(first.office, { from: SHEPHERD.email, words: 'OK got it' });
      await deliver(other, '\\Flagged');
      expect(verdictOf(other)).toMatchObject({ verdict: 'refused', detail: expect.stringMatching(/^token-other-contact: the token was issued to Farm office/) });
    });

    it('a vacation auto-reply (Auto-Submitted: auto-replied, RFC 3834 §5) is never answered or acted on', async () => {
      const vacation = replyTo(first.office, {
        from: OFFICE.email,
        words: 'OK, I am away until Monday and will read your mail then.',
        subject: `Out of office: Re: ${first.office.subject}`,
        headers: { 'Auto-Submitted': 'auto-replied' },
      });
      await deliver(vacation, '\\Flagged');
      expect(verdictOf(vacation)).toMatchObject({ verdict: 'refused', detail: expect.stringMatching(/^auto-reply/) });
    });

    it('a bounce (multipart/report; report-type=delivery-status, RFC 3464 §2) is never acted on', async () => {
      const bounce = bounceOf(first.office, OFFICE.email);
      await deliver(bounce, '\\Flagged');
      expect(verdictOf(bounce)).toMatchObject({ verdict: 'refused', detail: expect.stringMatching(/^delivery-report/) });
    });

    it('mailing-list mail (List-Id, RFC 2919 §3) is never acted on, even when it carries the token', async () => {
      const listed = replyTo(first.office, { from: OFFICE.email, words: 'OK', headers: { 'List-Id': 'Hollins hands <hands.hollins.test>' } });
      await deliver(listed, '\\Flagged');
      expect(verdictOf(listed)).toMatchObject({ verdict: 'refused', detail: expect.stringMatching(/^mailing-list/) });
    });

    it('a copy of our own alarm mail in the mailbox is never acted on', async () => {
      const own = rawMail({
        from: `Hollins monitor <${MONITOR_FROM}>`,
        to: OFFICE.email,
        subject: first.office.subject ?? '',
        body: first.office.text ?? '',
        messageId: first.office.messageId!,
      });
      await deliver(own, '\\Flagged');
      expect(verdictOf(own)).toMatchObject({ verdict: 'refused', detail: expect.stringMatching(/^own-message/) });
    });

    it('none of them acknowledged, answered or deleted anything', async () => {
      expect(monitor.read.alarm(first.id)!.state).toBe('unacknowledged');
      expect(acksOf(first.id)).toEqual([]);
      expect(confirmations()).toEqual([]);
      const flagged = (await mailbox.list()).filter((e) => e.flags.has('\\Flagged'));
      expect(flagged).toHaveLength(7);
      expect(flagged.every((e) => !e.flags.has('\\Deleted'))).toBe(true);
    });
  });

  describe('"OK, on my way" from the office acknowledges', () => {
    let reply: RawMail;

    it('acknowledges with the note, audited as by Farm office (mail reply)', async () => {
      const before = smtp.messages.length;
      reply = replyTo(first.office, { from: `"Ann at the office" <${OFFICE.email}>`, words: 'OK, on my way' });
      await deliver(reply, '\\Seen');
      const alarm = monitor.read.alarm(first.id)!;
      expect(acksOf(first.id)).toEqual([expect.objectContaining({ actor: 'Farm office (mail reply)', note: 'on my way' })]);
      // The sender check goes into the audit beside the acknowledgement (none here: Dovecot adds no Authentication-Results).
      expect(alarm.audit.find((a) => a.action === 'mail-reply')?.note).toContain('no DKIM signature and no Authentication-Results');

      // The confirmation: threaded under the reply and marked automatic so the replier's own responder stays quiet (RFC 3834 §5).
      await waitUntil(() => confirmations().length === 1, HUNG, () => 'the confirmation mail');
      const confirmation = confirmations()[0]!;
      expect(sentTo(confirmation)).toEqual([OFFICE.email]);
      expect(confirmation.inReplyTo).toBe(reply.messageId);
      expect(confirmation.text).toContain('Acknowledged: Lambing shed: tripped. Your note: "on my way".');

      // Everyone already told hears who acknowledged and the note, threaded on the alarm's first mail (RFC 5322 §3.6.4).
      const thread = new Set([first.office.messageId, first.shepherd.messageId]);
      const told = (contact: { email: string }) =>
        smtp.messages.slice(before).find((m) => sentTo(m).includes(contact.email) && thread.has(m.inReplyTo ?? '') && m.headers.get('auto-submitted') === 'auto-generated');
      await waitUntil(() => !!told(OFFICE) && !!told(SHEPHERD), HUNG, () => `the acknowledged notice to both contacts; have ${smtp.messages.slice(before).map((m) => `${sentTo(m)} ${m.inReplyTo} ${m.subject}`).join(' | ')}`);
      for (const mail of [told(OFFICE)!, told(SHEPHERD)!]) {
        expect(mail.text).toContain('Farm office (mail reply)');
        expect(mail.text).toContain('on my way');
      }
    });

    it('the handled reply stays in the mailbox, read and not flagged', async () => {
      const entry = (await mailbox.list()).find((e) => e.messageId === reply.messageId)!;
      // \\Recent is the server's own session flag (RFC 3501 §2.3.2), not the monitor's doing.
      expect([...entry.flags].filter((f) => f !== '\\Recent')).toEqual(['\\Seen']);
    });

    it('the same reply arriving twice (a second copy, same Message-ID) does nothing more', async () => {
      await deliver({ messageId: reply.messageId, raw: reply.raw }, '\\Seen');
      expect((await mailbox.list()).filter((e) => e.messageId === reply.messageId)).toHaveLength(2);
      expect(acksOf(first.id)).toHaveLength(1);
      await monitor.runNotifications();
      expect(confirmations()).toHaveLength(1);
    });

    it('a replay of the reply under a new Message-ID finds its token spent, and is left flagged', async () => {
      const replay = { ...reply, messageId: `<replay-${Date.now()}@elsewhere.test>` };
      replay.raw = reply.raw.replace(reply.messageId, replay.messageId);
      await deliver(replay, '\\Flagged');
      expect(verdictOf(replay)).toMatchObject({ verdict: 'refused', detail: expect.stringMatching(/^token-spent/) });
      expect(acksOf(first.id)).toHaveLength(1);
      expect(confirmations()).toHaveLength(1);
    });

    it('the shepherd replying to the acknowledged alarm hears who did it first', async () => {
      const late = replyTo(first.shepherd, { from: SHEPHERD.email, words: 'ack' });
      await deliver(late, '\\Seen');
      await waitUntil(() => confirmations().some((m) => sentTo(m).includes(SHEPHERD.email)), HUNG, () => "the shepherd's confirmation");
      const answer = confirmations().find((m) => sentTo(m).includes(SHEPHERD.email))!;
      expect(answer.inReplyTo).toBe(late.messageId);
      expect(answer.text).toMatch(/Lambing shed: tripped was already acknowledged by Farm office \(mail reply\) at .+\. Your reply changed nothing\./);
      expect(acksOf(first.id)).toHaveLength(1);
    });
  });

  it('a client that trims the quote and rewrites the subject still acknowledges: the token rides in the subject tag', async () => {
    const second = await raise('feed-store', 'open');
    const trimmed = replyTo(second.shepherd, {
      from: SHEPHERD.email,
      words: 'Acknowledged - fence down by the gate',
      trimQuote: true,
      subject: `AW: feed store [ref ${tokenOf(second.shepherd)}]`,
    });
    await deliver(trimmed, '\\Seen');
    expect(acksOf(second.id)).toEqual([expect.objectContaining({ actor: 'Shepherd (mail reply)', note: 'fence down by the gate' })]);
  });

  it('"shelve 2h REASON" from a contact mapped to an operator shelves the alarm', async () => {
    insertUser(monitor.store.db, { name: 'tom', role: 'operator', passwordHash: 'x', passwordSalt: 'y', createdAt: Date.now() });
    const third = await raise('lambing-shed', 'shorted');
    const shelve = replyTo(third.shepherd, { from: SHEPHERD.email, words: 'shelve 2h ewe lambing, sensor knocked' });
    await deliver(shelve, '\\Seen');
    const alarm = monitor.read.alarm(third.id)!;
    expect(alarm.state).toBe('shelved');
    expect(alarm.audit.find((a) => a.action === 'shelve')).toMatchObject({ actor: 'Shepherd (mail reply)' });
    // The office's contact maps to "ann", who has no user yet: not an operator, so no shelving by mail.
    const fourth = await raise('feed-store', 'shorted');
    const refused = replyTo(fourth.office, { from: OFFICE.email, words: 'shelve 1h testing' });
    await deliver(refused, '\\Flagged');
    expect(verdictOf(refused)).toMatchObject({ detail: expect.stringMatching(/^shelve-not-allowed/) });
    expect(monitor.read.alarm(fourth.id)!.state).toBe('unacknowledged');
  });

  it('the mailbox offset survives a restart: nothing handled before is handled again, and new replies are read', async () => {
    const handledBefore = (monitor.store.db.prepare('SELECT count(*) AS n FROM inbox_messages').get() as { n: number }).n;
    const confirmationsBefore = confirmations().length;
    const offsetBefore = inboxOffset(monitor.store.db, 'INBOX')!;
    await monitor.stop('restart', 3000);
    monitor = await start();
    expect(inboxOffset(monitor.store.db, 'INBOX')).toEqual(offsetBefore);
    // A later message is read only after every earlier one (UID order), so once it is flagged the monitor has passed them all.
    const probe = replyTo(first.office, { from: OFFICE.email, words: 'OK', headers: { 'List-Id': '<hands.hollins.test>' } });
    await deliver(probe, '\\Flagged');
    expect((monitor.store.db.prepare('SELECT count(*) AS n FROM inbox_messages').get() as { n: number }).n).toBe(handledBefore + 1);
    await monitor.runNotifications();
    expect(confirmations()).toHaveLength(confirmationsBefore);
    expect(inboxOffset(monitor.store.db, 'INBOX')!.lastUid).toBeGreaterThan(offsetBefore.lastUid);
  });

  it('IMAP down: "reply inbox failing" is raised, alarm mail still goes out; back up: cleared, and replies are read again', async () => {
    await dovecot.stop();
    await waitUntil(() => monitor.read.alarms('active').some((a) => a.condition === 'inbox-failing' && a.active), HUNG, () => 'the inbox-failing trouble');
    // Alarm mail never waits for the inbox.
    const during = await raise('feed-store', 'tripped');
    expect(tokenOf(during.office)).not.toBe('');
    await dovecot.restart();
    await mailbox.close();
    mailbox = await openMailbox(dovecot);
    await waitUntil(() => !monitor.read.alarms('active').some((a) => a.condition === 'inbox-failing' && a.active), HUNG, () => 'the inbox-failing trouble to clear');
    const ok = replyTo(during.office, { from: OFFICE.email, words: 'ok' });
    await deliver(ok, '\\Seen');
    expect(acksOf(during.id)).toHaveLength(1);
  });
});
