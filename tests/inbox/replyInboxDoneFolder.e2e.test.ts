import type { ParsedMail } from 'mailparser';
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { startDovecot, type DovecotServer } from '../helpers/dovecot.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { openMailbox, replyTo, waitUntil, type TestMailbox } from './fixtures/replyMail.js';
import { IMAP_PASS, IMAP_USER, OFFICE, SHEPHERD, imapEnv, sentTo, tokenOf, writeReplySite } from './fixtures/replySite.js';

/**
 * done_folder and reply_tag on the real Dovecot: handled replies are moved (never deleted), refused
 * ones stay in the watched folder flagged, and with reply_tag a reply whose client dropped both the
 * quote and the subject tag still carries the reference in the address it was sent to (RFC 5233).
 */
const HUNG = 15_000;
let tmp: TempDir;
let dovecot: DovecotServer;
let smtp: SmtpSink;
let monitor: Monitor;
let mailbox: TestMailbox;

beforeAll(async () => {
  tmp = makeTempDir('pw-reply-done-');
  mkdirSync(join(tmp.dir, 'data'));
  dovecot = await startDovecot({ user: IMAP_USER, pass: IMAP_PASS });
  smtp = await startSmtpSink({ auth: false });
  const file = writeReplySite({ dir: tmp.dir, imapPort: dovecot.port, smtpPort: smtp.port, doneFolder: 'Handled', replyTag: true });
  monitor = await startMonitor({ config: loadConfig(file), configDir: tmp.dir, logger: pino({ level: process.env.PW_TEST_LOG ?? 'silent' }), listen: false, announce: false, env: imapEnv(), inbox: { pollMs: 600_000 } });
  mailbox = await openMailbox(dovecot);
  await waitUntil(async () => (await mailbox.client.list()).some((f) => f.path === 'Handled'), HUNG, () => 'the monitor to create done_folder');
}, 60_000);

afterAll(async () => {
  await mailbox?.close();
  await monitor?.stop('test over', 3000);
  await smtp?.close();
  await dovecot?.close();
  tmp?.cleanup();
});

describe('done_folder and reply_tag', () => {
  let office: ParsedMail;
  let alarmId: number;

  beforeAll(async () => {
    monitor.core.alarmAction({ kind: 'raise', source: 'feed-store', loopId: 'feed-store', condition: 'tripped', latched: true, policy: 'default' }, Date.now());
    alarmId = monitor.read.alarms('active').find((a) => a.loopId === 'feed-store')!.id;
    await monitor.runNotifications();
    await waitUntil(() => smtp.messages.some((m) => sentTo(m).includes(OFFICE.email) && tokenOf(m) !== ''), HUNG, () => 'the alarm mail');
    office = smtp.messages.find((m) => sentTo(m).includes(OFFICE.email) && tokenOf(m) !== '')!;
  });

  it('the reference rides in the Reply-To address as a +subaddress', () => {
    expect(office.replyTo?.value[0]?.address).toBe(IMAP_USER.replace('@', `+${tokenOf(office)}@`));
  });

  it('a refused reply stays in the watched folder, flagged', async () => {
    const refused = replyTo(office, { from: SHEPHERD.email, words: 'OK' });
    await mailbox.append(refused);
    await waitUntil(async () => (await mailbox.list()).some((e) => e.messageId === refused.messageId && e.flags.has('\\Flagged')), HUNG, () => 'the refused reply to be flagged');
  });

  it('a reply with neither quote nor subject tag acknowledges by the address it went to, and is moved to done_folder, read', async () => {
    const bare = replyTo(office, { from: OFFICE.email, words: 'ok', trimQuote: true, subject: 'Re: feed store' });
    await mailbox.append(bare);
    await waitUntil(async () => (await mailbox.list('Handled')).some((e) => e.messageId === bare.messageId), HUNG, () => 'the reply to reach done_folder');
    const moved = (await mailbox.list('Handled')).find((e) => e.messageId === bare.messageId)!;
    expect(moved.flags.has('\\Seen')).toBe(true);
    expect((await mailbox.list()).some((e) => e.messageId === bare.messageId)).toBe(false);
    expect(monitor.read.alarm(alarmId)!.audit.filter((a) => a.action === 'acknowledge')).toEqual([expect.objectContaining({ actor: 'Farm office (mail reply)' })]);
  });
});
