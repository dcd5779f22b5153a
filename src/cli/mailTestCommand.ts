import { parseArgs } from 'node:util';
import { z } from 'zod';
import { ConfigError } from '../config/configError.js';
import { loadConfig } from '../config/loadConfig.js';
import type { SiteConfig } from '../config/schema.js';
import type { CliIo } from './cliTypes.js';
import { defineCommand, UsageError } from './defineCommand.js';
import { formatSiteAndUtc } from '../notify/formatSiteTime.js';
import { escapeHtml, mailFooterText, mailPageHtml } from '../notify/mailLayout.js';
import { createMessageIdFactory, messageIdDomain } from '../notify/messageId.js';
import { createDropFolderTransport, createSmtpTransport, dropFolderFor, type MailTransport } from '../notify/mailTransport.js';
import { publicUrlFor } from '../notify/noticeSettings.js';
import { NotifyError } from '../notify/notifyError.js';
import type { OutboxMessage } from '../model/outboxMessage.js';
import { dirname, resolve } from 'node:path';
import { parseDuration } from '../config/duration.js';
import { MAIL_TEST_RECIPIENT } from '../inbox/decideReply.js';
import { loadOrCreateAckSecret } from '../notify/ackSecret.js';
import { replyAddressFor } from '../notify/noticeSettings.js';
import { signReplyToken } from '../notify/replyToken.js';
import { awaitTestReply, currentUidNext } from './awaitTestReply.js';

const USAGE = `usage: pairwatch mail-test ADDRESS [--config FILE] [--verbose] [--await-reply [--wait DURATION]]
  Sends one test message through the configured SMTP server and prints its answer
  (without mail.smtp, writes the .eml file and prints where). --verbose shows the SMTP conversation.
  --await-reply (needs mail.imap): asks the reader to reply, then watches the reply mailbox read-only
  for up to --wait (default 10m) and prints who replied, their first words, the sender check and
  whether the monitor would accept such a reply. Exit 0 when a reply came back, 1 when none did.
`;
const AWAIT_DEFAULT_MS = 10 * 60_000;
const AWAIT_MAX_MS = 60 * 60_000;
const addressSchema = z.email();

function testMessage(config: SiteConfig, address: string, now: number, secret: Buffer | null): OutboxMessage {
  const messageId = createMessageIdFactory(messageIdDomain(config.mail.from))();
  const token = secret ? signReplyToken({ messageId, recipient: MAIL_TEST_RECIPIENT, expiresAt: now + AWAIT_MAX_MS }, secret) : null;
  const subject = `[TEST] ${config.site.name}: test message from pairwatch${token ? ` [ref ${token}]` : ''}`;
  const publicUrl = publicUrlFor(config.web);
  const lines = [
    `This is a test message from pairwatch at ${config.site.name}, sent ${formatSiteAndUtc(now, config.site.timezone)}.`,
    'If you can read it, alarm mail from this monitor reaches you. Check that it did not land in a spam folder.',
    ...(token ? ['Please reply with OK: the reply tells whether replies to alarm mail can acknowledge.', `Reference: ${token}`] : []),
  ];
  return {
    messageId,
    kind: 'test',
    priority: null,
    from: config.mail.from,
    to: [address],
    subject,
    text: [subject, '', ...lines, '', mailFooterText(config.site.name, publicUrl)].join('\n'),
    html: mailPageHtml(subject, lines.map((l) => `<p>${escapeHtml(l)}</p>`).join('\n')),
    headers: { 'Auto-Submitted': 'auto-generated', ...(token ? { 'Reply-To': replyAddressFor(config) } : {}) },
    alarmIds: [],
  };
}

function say(stream: NodeJS.WritableStream, line: string): void {
  stream.write(`${line}\n`);
}

/** `pairwatch mail-test ADDRESS --config FILE`: sends one test message and prints what the server said. */
export const mailTestCommand = defineCommand({ name: 'mail-test', usage: USAGE, run: async (argv: string[], io: CliIo) => {
  const parsed = parseArgs({
    args: argv,
    allowPositionals: true,
    options: {
      config: { type: 'string', default: 'config/site.yaml' },
      verbose: { type: 'boolean', default: false },
      'await-reply': { type: 'boolean', default: false },
      wait: { type: 'string' },
    },
  });
  const [address, ...extra] = parsed.positionals;
  if (!address) throw new UsageError('give the address to send the test message to');
  if (extra.length > 0) throw new UsageError(`unexpected argument "${extra[0]}"`);
  if (!addressSchema.safeParse(address).success) throw new UsageError(`"${address}" is not an email address`);

  let config: SiteConfig;
  try {
    config = loadConfig(parsed.values.config);
  } catch (err) {
    if (err instanceof ConfigError) {
      say(io.stderr, `${err.file}:`);
      for (const line of err.lines()) say(io.stderr, `  ${line}`);
      return 2;
    }
    say(io.stderr, `mail-test: cannot load the config: ${(err as Error).message}`);
    return 2;
  }

  const awaitReply = parsed.values['await-reply'];
  let waitMs = AWAIT_DEFAULT_MS;
  if (parsed.values.wait !== undefined) {
    if (!awaitReply) throw new UsageError('--wait goes with --await-reply');
    const ms = parseDuration(parsed.values.wait);
    if (ms === undefined || ms < 1000 || ms > AWAIT_MAX_MS) throw new UsageError(`--wait must be a duration from 1s to 1h, such as 5m, not "${parsed.values.wait}"`);
    waitMs = ms;
  }
  if (awaitReply && !config.mail.imap) {
    say(io.stderr, 'mail-test: --await-reply needs mail.imap in the config (the mailbox replies go to)');
    return 2;
  }
  const secret = awaitReply ? loadOrCreateAckSecret(dirname(resolve(config.storage.path))) : null;
  let sinceUid = 1;
  if (awaitReply) {
    try {
      sinceUid = await currentUidNext(config, io.env);
    } catch (err) {
      say(io.stderr, `mail-test: cannot open the reply mailbox ${config.mail.imap!.host}:${config.mail.imap!.port}: ${(err as Error).message} (run pairwatch doctor)`);
      return 1;
    }
  }

  let transport: MailTransport;
  try {
    transport = config.mail.smtp
      ? createSmtpTransport(config.mail.smtp, io.env, parsed.values.verbose ? { transcript: (line) => say(io.stdout, `  | ${line}`) } : {})
      : createDropFolderTransport(dropFolderFor(config));
  } catch (err) {
    if (err instanceof NotifyError) {
      say(io.stderr, `${err.code}: ${err.message}`);
      return 2;
    }
    say(io.stderr, `mail-test: cannot set up mail: ${(err as Error).message}`);
    return 1;
  }

  const now = Date.now();
  const message = testMessage(config, address, now, secret);
  say(io.stdout, `sending a test message to ${address} through ${transport.description}`);
  try {
    const result = await transport.send(message, { date: now });
    if (result.location) say(io.stdout, `no SMTP server configured (mail.smtp); the message was written to ${result.location}`);
    else say(io.stdout, `accepted for ${result.accepted.join(', ') || '(nobody)'}; the server answered: ${result.response}`);
    say(io.stdout, `Message-ID: ${message.messageId}`);
    if (!awaitReply || !secret) return 0;
    say(io.stdout, `waiting up to ${Math.round(waitMs / 1000)} s for a reply in ${config.mail.imap!.folder} on ${config.mail.imap!.host} (read only) …`);
    const report = await awaitTestReply({ config, env: io.env, secret, testMessageId: message.messageId, sinceUid, deadline: Date.now() + waitMs });
    if (!report) {
      say(io.stdout, 'no reply came back in time: check that replies reach the mailbox in mail.imap (a filter or another folder?)');
      return 1;
    }
    say(io.stdout, `reply from ${report.from ?? '(no From)'}: "${report.words}"`);
    say(io.stdout, `sender check: ${report.auth}`);
    say(io.stdout, report.decision.verdict === 'test-reply'
      ? 'would verify: yes, it threads to the test mail and carries its token; a reply like it to an alarm mail, from a contact, acknowledges'
      : `would verify: no (${report.decision.verdict === 'refused' ? `${report.decision.reason}: ${report.decision.detail}` : report.decision.verdict})`);
    return 0;
  } catch (err) {
    const error = err as NotifyError;
    say(io.stderr, `mail-test failed (${error.code ?? 'PW_MAIL_SEND_FAILED'}): ${error.message}`);
    return 1;
  } finally {
    transport.close();
  }
} });
