import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mailTestCommand } from '../../src/cli/mailTestCommand.js';
import { captureCliIo } from '../helpers/captureCliIo.js';
import { startDovecot, type DovecotServer } from '../helpers/dovecot.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { openMailbox, replyTo, waitUntil } from './fixtures/replyMail.js';
import { IMAP_PASS, IMAP_USER, OFFICE, imapEnv, writeReplySite } from './fixtures/replySite.js';

/** `pairwatch mail-test ADDRESS --await-reply`: the test mail goes out, a reply comes back into the real Dovecot, and is reported. */
let tmp: TempDir;
let dovecot: DovecotServer;
let smtp: SmtpSink;
let configFile: string;

beforeAll(async () => {
  tmp = makeTempDir('pw-mailtest-reply-');
  mkdirSync(join(tmp.dir, 'data'));
  dovecot = await startDovecot({ user: IMAP_USER, pass: IMAP_PASS });
  smtp = await startSmtpSink({ auth: false });
  configFile = writeReplySite({ dir: tmp.dir, imapPort: dovecot.port, smtpPort: smtp.port });
}, 30_000);

afterAll(async () => {
  await smtp?.close();
  await dovecot?.close();
  tmp?.cleanup();
});

describe('mail-test --await-reply', () => {
  it('reports who replied, their words, and that such a reply would verify; the mailbox is left untouched', async () => {
    const cap = captureCliIo({ env: imapEnv() });
    const running = mailTestCommand([OFFICE.email, '--config', configFile, '--await-reply', '--wait', '30s'], cap.io);
    await waitUntil(() => smtp.messages.length === 1, 15_000, () => 'the test mail');
    const test = smtp.messages[0]!;
    expect(test.subject).toMatch(/^\[TEST\] Hollins Mead: test message from pairwatch \[ref pw-/);
    expect(test.replyTo?.value[0]?.address).toBe(IMAP_USER);
    const mailbox = await openMailbox(dovecot);
    try {
      await mailbox.append(replyTo(test, { from: OFFICE.email, words: 'OK, got it on the tractor' }));
      expect(await running).toBe(0);
      expect(cap.out()).toContain(`reply from ${OFFICE.email}: "OK, got it on the tractor"`);
      expect(cap.out()).toContain('would verify: yes');
      // Read only: the monitor, not mail-test, is the one that marks replies.
      const [entry] = await mailbox.list();
      expect(entry!.flags.has('\\Seen') || entry!.flags.has('\\Flagged')).toBe(false);
    } finally {
      await mailbox.close();
    }
  }, 45_000);

  it('without mail.imap it says what is missing (exit 2); --wait alone is a usage error', async () => {
    const file = join(tmp.dir, 'no-imap.yaml');
    const { readFileSync, writeFileSync } = await import('node:fs');
    writeFileSync(file, readFileSync(configFile, 'utf8').replace(/  imap:\n(    .*\n)+/, ''));
    const cap = captureCliIo({ env: imapEnv() });
    expect(await mailTestCommand([OFFICE.email, '--config', file, '--await-reply'], cap.io)).toBe(2);
    expect(cap.err()).toContain('--await-reply needs mail.imap');
    const cap2 = captureCliIo({ env: imapEnv() });
    expect(await mailTestCommand([OFFICE.email, '--config', file, '--wait', '5m'], cap2.io)).toBe(2);
    expect(cap2.all()).toContain('--wait goes with --await-reply');
  });

  it('answers --help with exit 0', async () => {
    const cap = captureCliIo();
    expect(await mailTestCommand(['--help'], cap.io)).toBe(0);
    expect(cap.out()).toContain('--await-reply');
  });
});
