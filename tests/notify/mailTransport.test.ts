import { afterEach, describe, expect, it } from 'vitest';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { simpleParser } from 'mailparser';
import { MailSendError } from '../../src/notify/mailSendError.js';
import { createDropFolderTransport, createSmtpTransport, type MailTransport, type SmtpConfig } from '../../src/notify/mailTransport.js';
import { NotifyError } from '../../src/notify/notifyError.js';
import type { OutboxMessage } from '../../src/model/outboxMessage.js';
import { freePort } from '../helpers/freePort.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { useTempDirs } from '../helpers/tempDir.js';

const message: OutboxMessage = {
  messageId: '<transport-test-1@pairwatch.ridgeway.example>',
  kind: 'notice',
  priority: 'alarm',
  from: 'pairwatch <monitor@ridgeway.example>',
  to: ['"Farm office" <office@ridgeway.example>'],
  subject: '[ALARM] Ridgeway Farm: Well pit — tripped',
  text: 'Plain part. Frost: −6 °C.',
  html: '<p>HTML part.</p>',
  headers: {
    'Auto-Submitted': 'auto-generated',
    'In-Reply-To': '<thread-start@pairwatch.ridgeway.example>',
    References: '<thread-start@pairwatch.ridgeway.example>',
  },
  alarmIds: [1],
};
const created = Date.parse('2026-12-01T03:00:10.000Z');

const smtp = (port: number, extra: Partial<SmtpConfig> = {}): SmtpConfig => ({
  host: '127.0.0.1',
  port,
  secure: false,
  user: 'monitor',
  pass: 's3cret-pass',
  require_tls: false,
  timeout: 5_000,
  ...extra,
});

const tempDir = useTempDirs('each');
let sink: SmtpSink | undefined;
let transport: MailTransport | undefined;
afterEach(async () => {
  transport?.close();
  await sink?.close();
  sink = transport = undefined;
});

describe('createSmtpTransport', () => {
  it('sends with the stored Message-ID, threading headers, Date and both parts', async () => {
    sink = await startSmtpSink();
    transport = createSmtpTransport(smtp(sink.port), {});
    const result = await transport.send(message, { date: created });
    expect(result.accepted).toEqual(['office@ridgeway.example']);
    expect(result.response).toMatch(/^250 /); // RFC 5321 §4.2.1: 2yz is positive completion
    const mail = sink.messages[0]!;
    expect(mail.messageId).toBe(message.messageId);
    expect(mail.inReplyTo).toBe('<thread-start@pairwatch.ridgeway.example>');
    expect(mail.references).toBe('<thread-start@pairwatch.ridgeway.example>');
    expect(mail.headers.get('auto-submitted')).toBe('auto-generated');
    expect(mail.date?.getTime()).toBe(created);
    expect(mail.text?.trim()).toBe('Plain part. Frost: −6 °C.');
    expect(mail.html).toContain('<p>HTML part.</p>');
  });

  it('upgrades with STARTTLS when the server offers it', async () => {
    sink = await startSmtpSink({ starttls: true });
    // The test server's certificate is self-signed; a real site would use a proper one or pass its CA.
    transport = createSmtpTransport(smtp(sink.port, { require_tls: true }), {}, { tls: { rejectUnauthorized: false } });
    await transport.send(message);
    expect(sink.overTls).toEqual([true]);
    expect(await transport.verify()).toMatchObject({ ok: true });
  });

  it('with require_tls, refuses to send in the clear to a server without STARTTLS', async () => {
    sink = await startSmtpSink({ starttls: false });
    transport = createSmtpTransport(smtp(sink.port, { require_tls: true }), {});
    const err = await transport.send(message).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(MailSendError);
    expect((err as MailSendError).scope).toBe('link');
    expect(sink.messages).toHaveLength(0);
  });

  it('reads the password from the environment variable pass_env names', async () => {
    sink = await startSmtpSink();
    transport = createSmtpTransport(smtp(sink.port, { pass: undefined, pass_env: 'PW_SMTP_PASS' }), { PW_SMTP_PASS: 's3cret-pass' });
    expect(await transport.verify()).toEqual({ ok: true, detail: `127.0.0.1:${sink.port} accepted the connection and the login` });
  });

  it('an unset pass_env variable is a clear error naming the setting', () => {
    expect(() => createSmtpTransport(smtp(25, { pass: undefined, pass_env: 'PW_NOT_SET' }), {})).toThrow(NotifyError);
    expect(() => createSmtpTransport(smtp(25, { pass: undefined, pass_env: 'PW_NOT_SET' }), {})).toThrow(
      'mail.smtp.pass_env: the environment variable PW_NOT_SET is not set',
    );
  });

  it('a wrong password is a link failure that says the login was refused', async () => {
    sink = await startSmtpSink();
    transport = createSmtpTransport(smtp(sink.port, { pass: 'wrong' }), {});
    const err = (await transport.send(message).catch((e: unknown) => e)) as MailSendError;
    expect(err.code).toBe('PW_MAIL_SEND_FAILED');
    expect(err.scope).toBe('link');
    expect(err.message).toMatch(/refused the login/);
    expect(await transport.verify()).toMatchObject({ ok: false, detail: expect.stringMatching(/refused the login/) });
  });

  it('verify() reports a server that is down without throwing', async () => {
    const port = await freePort();
    transport = createSmtpTransport(smtp(port), {});
    expect(await transport.verify()).toEqual({ ok: false, detail: `cannot connect to 127.0.0.1:${port} (connection refused)` });
  });
});

describe('createDropFolderTransport', () => {
  it('writes an RFC 5322 .eml file with CRLF line ends that a mail parser reads back whole', async () => {
    const dir = tempDir('pw-eml-');
    transport = createDropFolderTransport(join(dir, 'outbox-mail'));
    const result = await transport.send(message, { date: created });
    expect(result.location).toBeDefined();
    const raw = readFileSync(result.location!);
    // RFC 5322 §2.1: lines end in CRLF.
    expect(raw.toString('latin1')).toMatch(/\r\n/);
    expect(raw.toString('latin1').replace(/\r\n/g, '')).not.toMatch(/\n/);
    const mail = await simpleParser(raw);
    expect(mail.messageId).toBe(message.messageId);
    expect(mail.subject).toBe(message.subject);
    expect(mail.inReplyTo).toBe('<thread-start@pairwatch.ridgeway.example>');
    expect(mail.headers.get('auto-submitted')).toBe('auto-generated');
    expect(mail.date?.getTime()).toBe(created);
  });

  it('a retried message overwrites its own file instead of adding a second', async () => {
    const dir = tempDir('pw-eml-');
    transport = createDropFolderTransport(dir);
    await transport.send(message, { date: created });
    await transport.send(message, { date: created });
    expect(readdirSync(dir).filter((f) => f.endsWith('.eml'))).toHaveLength(1);
    expect(readdirSync(dir).filter((f) => f.endsWith('.part'))).toHaveLength(0);
  });

  it('verify() creates the folder and says where mail goes', async () => {
    const dir = tempDir('pw-eml-');
    transport = createDropFolderTransport(join(dir, 'new'));
    expect(await transport.verify()).toEqual({ ok: true, detail: `mail is written as .eml files to ${join(dir, 'new')}` });
  });
});
