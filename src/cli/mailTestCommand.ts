import { parseArgs } from 'node:util';
import { z } from 'zod';
import { ConfigError } from '../config/configError.js';
import { loadConfig } from '../config/loadConfig.js';
import type { SiteConfig } from '../config/schema.js';
import type { CliIo } from './cliTypes.js';
import { defineCommand, UsageError } from './defineCommand.js';
import { dropFolderFor } from '../notify/dropFolder.js';
import { formatSiteAndUtc } from '../notify/formatSiteTime.js';
import { mailFooterText, mailPageHtml } from '../notify/mailLayout.js';
import { createMessageIdFactory, messageIdDomain } from '../notify/messageId.js';
import { createDropFolderTransport, createSmtpTransport, type MailTransport } from '../notify/mailTransport.js';
import { publicUrlFor } from '../notify/noticeSettings.js';
import { NotifyError } from '../notify/notifyError.js';
import type { OutboxMessage } from '../notify/outboxMessage.js';
import { escapeHtml } from '../notify/escapeHtml.js';

const USAGE = `usage: pairwatch mail-test ADDRESS [--config FILE] [--verbose]
  Sends one test message through the configured SMTP server and prints its answer
  (without mail.smtp, writes the .eml file and prints where). --verbose shows the SMTP conversation.
`;
const addressSchema = z.email();

function testMessage(config: SiteConfig, address: string, now: number): OutboxMessage {
  const subject = `[TEST] ${config.site.name}: test message from pairwatch`;
  const publicUrl = publicUrlFor(config.web);
  const lines = [
    `This is a test message from pairwatch at ${config.site.name}, sent ${formatSiteAndUtc(now, config.site.timezone)}.`,
    'If you can read it, alarm mail from this monitor reaches you. Check that it did not land in a spam folder.',
  ];
  return {
    messageId: createMessageIdFactory(messageIdDomain(config.mail.from))(),
    kind: 'test',
    priority: null,
    from: config.mail.from,
    to: [address],
    subject,
    text: [subject, '', ...lines, '', mailFooterText(config.site.name, publicUrl)].join('\n'),
    html: mailPageHtml(subject, lines.map((l) => `<p>${escapeHtml(l)}</p>`).join('\n')),
    headers: { 'Auto-Submitted': 'auto-generated' },
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
    options: { config: { type: 'string', default: 'config/site.yaml' }, verbose: { type: 'boolean', default: false } },
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
  const message = testMessage(config, address, now);
  say(io.stdout, `sending a test message to ${address} through ${transport.description}`);
  try {
    const result = await transport.send(message, { date: now });
    if (result.location) say(io.stdout, `no SMTP server configured (mail.smtp); the message was written to ${result.location}`);
    else say(io.stdout, `accepted for ${result.accepted.join(', ') || '(nobody)'}; the server answered: ${result.response}`);
    say(io.stdout, `Message-ID: ${message.messageId}`);
    return 0;
  } catch (err) {
    const error = err as NotifyError;
    say(io.stderr, `mail-test failed (${error.code ?? 'PW_MAIL_SEND_FAILED'}): ${error.message}`);
    return 1;
  } finally {
    transport.close();
  }
} });
