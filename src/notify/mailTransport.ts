import { chmodSync, renameSync, writeFileSync, accessSync, constants as fsConstants } from 'node:fs';
import { makePrivateDir, PRIVATE_FILE_MODE } from '../store/privateFiles.js';
import { format } from 'node:util';
import type { ConnectionOptions } from 'node:tls';
import nodemailer from 'nodemailer';
import type { SendMailOptions } from 'nodemailer';
import { dirname, join, resolve } from 'node:path';
import type { MailConfig, SiteConfig } from '../config/schema.js';
import { NotifyError } from './notifyError.js';
import { toMailSendError } from './mailSendError.js';
import type { OutboxMessage } from '../model/outboxMessage.js';

export interface MailSendResult {
  accepted: string[];
  /** The server's final reply (SMTP), or where the file went (drop folder). */
  response: string;
  /** The .eml file written, for the drop folder. */
  location?: string;
}

export interface TransportCheck {
  ok: boolean;
  detail: string;
}

export interface MailTransport {
  /** `smtp://host:port` or `folder /path`, for logs. */
  readonly description: string;
  /** Resolves when the message was handed over; rejects with a MailSendError. */
  send(message: OutboxMessage, options?: { date?: number }): Promise<MailSendResult>;
  /** Connects (and for SMTP: STARTTLS, login) without sending anything. Never rejects. */
  verify(): Promise<TransportCheck>;
  close(): void;
}

export type SmtpConfig = NonNullable<MailConfig['smtp']>;

export interface SmtpTransportOptions {
  /** Extra TLS settings, e.g. a private CA. */
  tls?: ConnectionOptions;
  /** Receives each SMTP command and reply (logins are masked by nodemailer), for `mail-test --verbose`. */
  transcript?: (line: string) => void;
}

/** Nodemailer's message fields for an outbox message; SMTP and drop folder share it, so both produce the same headers. */
function toNodemailer(message: OutboxMessage, date: number | undefined): SendMailOptions {
  const { 'In-Reply-To': inReplyTo, References: references, ...headers } = message.headers;
  const options: SendMailOptions = {
    messageId: message.messageId,
    from: message.from,
    to: message.to,
    subject: message.subject,
    text: message.text,
    html: message.html,
    headers,
  };
  if (inReplyTo) options.inReplyTo = inReplyTo;
  if (references) options.references = references.split(/\s+/).filter(Boolean);
  if (date !== undefined) options.date = new Date(date);
  return options;
}

function transcriptLogger(sink: (line: string) => void) {
  const write = (...args: unknown[]) => {
    // Bunyan style: a data object, then a printf-style message.
    const rest = typeof args[0] === 'object' && args[0] !== null ? args.slice(1) : args;
    sink(format(...(rest as [unknown, ...unknown[]])));
  };
  return { trace: write, debug: write, info: write, warn: write, error: write, fatal: write };
}

/** Password from `pass`, or from the environment variable `pass_env` names. */
function smtpPassword(smtp: SmtpConfig, env: NodeJS.ProcessEnv): string | undefined {
  if (smtp.pass_env === undefined) return smtp.pass;
  const value = env[smtp.pass_env];
  if (value === undefined || value === '') {
    throw new NotifyError('PW_MAIL_PASS_MISSING', `mail.smtp.pass_env: the environment variable ${smtp.pass_env} is not set`);
  }
  return value;
}

/**
 * SMTP through nodemailer. `secure: true` is TLS from the first byte (port 465); otherwise nodemailer
 * upgrades with STARTTLS whenever the server offers it, and `require_tls` refuses to go on without it.
 * Throws NotifyError PW_MAIL_PASS_MISSING when pass_env names an unset variable.
 */
export function createSmtpTransport(smtp: SmtpConfig, env: NodeJS.ProcessEnv, options: SmtpTransportOptions = {}): MailTransport {
  const pass = smtpPassword(smtp, env);
  const where = `${smtp.host}:${smtp.port}`;
  const transporter = nodemailer.createTransport({
    host: smtp.host,
    port: smtp.port,
    secure: smtp.secure,
    requireTLS: smtp.require_tls,
    ...(smtp.user !== undefined ? { auth: { user: smtp.user, pass: pass ?? '' } } : {}),
    connectionTimeout: smtp.timeout,
    greetingTimeout: smtp.timeout,
    socketTimeout: smtp.timeout,
    ...(options.tls ? { tls: options.tls } : {}),
    ...(options.transcript ? { logger: transcriptLogger(options.transcript), transactionLog: true } : {}),
  });
  return {
    description: `smtp://${where}`,
    async send(message, sendOptions) {
      try {
        const info = await transporter.sendMail(toNodemailer(message, sendOptions?.date));
        return { accepted: (info.accepted ?? []).map(String), response: String(info.response ?? '') };
      } catch (err) {
        throw toMailSendError(err, where);
      }
    },
    async verify() {
      try {
        await transporter.verify();
        return { ok: true, detail: `${where} accepted the connection${smtp.user ? ' and the login' : ''}` };
      } catch (err) {
        return { ok: false, detail: toMailSendError(err, where).message };
      }
    },
    close() {
      transporter.close();
    },
  };
}

/** A file name from the Message-ID, so a retried message overwrites its own file instead of making a second one. */
function emlFileName(message: OutboxMessage, date: number): string {
  const stamp = new Date(date).toISOString().replace(/[-:]/g, '').replace(/\.\d{3}Z$/, 'Z');
  const id = message.messageId.replace(/^<|>$/g, '').replace(/[^A-Za-z0-9._@-]/g, '_').slice(0, 120);
  return `${stamp}-${id}.eml`;
}

/**
 * Writes each message as an RFC 5322 .eml file (CRLF line ends) into `dir`: mail for a site with no
 * mail server, such as the demo. Written to a temporary name and renamed, so a reader never sees half a file.
 */
export function createDropFolderTransport(dir: string): MailTransport {
  const folder = resolve(dir);
  const composer = nodemailer.createTransport({ streamTransport: true, buffer: true, newline: 'windows' });
  return {
    description: `folder ${folder}`,
    async send(message, sendOptions) {
      const date = sendOptions?.date ?? Date.now();
      try {
        const info = await composer.sendMail(toNodemailer(message, date));
        makePrivateDir(folder);
        const file = join(folder, emlFileName(message, date));
        const temp = `${file}.part`;
        // Owner-only whatever the umask: the message carries live acknowledge links.
        writeFileSync(temp, info.message as Buffer, { mode: PRIVATE_FILE_MODE });
        chmodSync(temp, PRIVATE_FILE_MODE);
        renameSync(temp, file);
        return { accepted: [...message.to], response: `written to ${file}`, location: file };
      } catch (err) {
        throw toMailSendError(err, folder);
      }
    },
    async verify() {
      try {
        makePrivateDir(folder);
        accessSync(folder, fsConstants.W_OK);
        return { ok: true, detail: `mail is written as .eml files to ${folder}` };
      } catch (err) {
        return { ok: false, detail: toMailSendError(err, folder).message };
      }
    },
    close() {},
  };
}

/** Where .eml files go without SMTP: mail.drop_folder, else `outbox-mail` beside the database. Relative paths are from the working directory, like storage.path. */
export function dropFolderFor(config: SiteConfig): string {
  return resolve(config.mail.drop_folder ?? join(dirname(config.storage.path), 'outbox-mail'));
}
