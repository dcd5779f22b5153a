import { format } from 'node:util';
import type { MailConfig } from '../../config/schema.js';
import type { CheckResult } from './checkResult.js';
import { failed, passed, warned } from './checkResult.js';

export interface SmtpVerifyOptions {
  host: string;
  port: number;
  secure: boolean;
  requireTls: boolean;
  user?: string;
  pass?: string;
  timeoutMs: number;
}

/** Connects, upgrades to TLS when offered, logs in, and quits: no mail is sent. Resolves with the client's log lines. */
export type SmtpVerifier = (options: SmtpVerifyOptions) => Promise<{ log: string[] }>;

export class SmtpVerifyError extends Error {
  constructor(
    readonly errorCode: string,
    message: string,
    readonly response: string | null,
    readonly log: string[],
  ) {
    super(message);
    this.name = 'SmtpVerifyError';
  }
}

export const verifyWithNodemailer: SmtpVerifier = async (options) => {
  const { createTransport } = await import('nodemailer');
  const log: string[] = [];
  const keep = (...args: unknown[]) => {
    // Bunyan style: (data, message, ...args) or (message, ...args).
    const [first, ...rest] = args;
    log.push(typeof first === 'string' ? format(first, ...rest) : format(...(rest as [string, ...unknown[]])));
  };
  const logger = { trace: keep, debug: keep, info: keep, warn: keep, error: keep, fatal: keep };
  const transport = createTransport({
    host: options.host,
    port: options.port,
    secure: options.secure,
    requireTLS: options.requireTls,
    ...(options.user ? { auth: { user: options.user, pass: options.pass ?? '' } } : {}),
    connectionTimeout: options.timeoutMs,
    greetingTimeout: options.timeoutMs,
    socketTimeout: options.timeoutMs,
    logger,
  });
  try {
    await transport.verify();
    return { log };
  } catch (err) {
    const e = err as { code?: string; message?: string; response?: string };
    throw new SmtpVerifyError(e.code ?? 'EUNKNOWN', (e.message ?? String(err)).split('\n')[0]!, e.response ?? null, log);
  } finally {
    transport.close();
  }
};

const LOOPBACK = /^(127\.|::1$|localhost$)/;
const DOCTOR_TIMEOUT_MS = 10_000;

/** SMTP: can we reach the server, secure the connection and log in? */
export async function checkSmtp(mail: MailConfig, env: NodeJS.ProcessEnv, verify: SmtpVerifier): Promise<CheckResult> {
  const name = 'smtp';
  const smtp = mail.smtp;
  if (!smtp) {
    return warned(
      name,
      'skipped: no mail.smtp in the config, so alarm mail is written as .eml files in the data folder and reaches nobody',
      'add mail.smtp (host, port, user, pass_env) so alarms are mailed',
    );
  }
  let pass = smtp.pass;
  if (smtp.pass_env !== undefined) {
    pass = env[smtp.pass_env];
    if (!pass) {
      return failed(
        name,
        `the password variable ${smtp.pass_env} (mail.smtp.pass_env) is not set in this environment`,
        `run doctor with it set (sudo --preserve-env=${smtp.pass_env} …); the service reads it from /etc/pairwatch/env as ${smtp.pass_env}=…`,
      );
    }
  }
  const where = `${smtp.host}:${smtp.port}`;
  try {
    const { log } = await verify({
      host: smtp.host,
      port: smtp.port,
      secure: smtp.secure,
      requireTls: smtp.require_tls,
      ...(smtp.user !== undefined ? { user: smtp.user } : {}),
      ...(pass !== undefined ? { pass } : {}),
      timeoutMs: Math.min(smtp.timeout, DOCTOR_TIMEOUT_MS),
    });
    const startTls = log.some((line) => /upgraded with STARTTLS/i.test(line));
    const security = smtp.secure ? 'TLS' : startTls ? 'STARTTLS' : 'no encryption';
    const login = smtp.user ? `logged in as ${smtp.user}` : 'no login configured';
    const finding = `connected to ${where}, ${security}, ${login}; no mail sent`;
    if (security === 'no encryption' && smtp.user) {
      // The login itself went out unencrypted: whoever can read the connection has the password.
      return warned(
        name,
        `${finding}; the login went over the connection without TLS, so the password was readable by anyone on the way`,
        'use a server that offers STARTTLS (port 587) or TLS (port 465 with secure: true), and set require_tls: true so a login never goes out in clear',
      );
    }
    if (security === 'no encryption' && !LOOPBACK.test(smtp.host)) {
      return warned(name, finding, 'the server offered no STARTTLS: passwords and alarms travel in clear; use port 587 with STARTTLS or 465 with secure: true');
    }
    return passed(name, finding);
  } catch (err) {
    return smtpFailure(err, where, smtp.user, smtp.secure);
  }
}

function smtpFailure(err: unknown, where: string, user: string | undefined, secure: boolean): CheckResult {
  const name = 'smtp';
  const e = err instanceof SmtpVerifyError ? err : new SmtpVerifyError('EUNKNOWN', String((err as Error)?.message ?? err), null, []);
  const said = e.response ? ` (server said: ${e.response.split('\n')[0]})` : '';
  const portFix = 'port 587 uses secure: false (STARTTLS), port 465 uses secure: true';
  if (e.errorCode === 'EAUTH') {
    return failed(name, `${where} refused the login${user ? ` for ${user}` : ''}${said}`, 'check mail.smtp.user and the password (pass_env or pass)');
  }
  if (e.errorCode === 'EDNS') return failed(name, `the mail server name in ${where} was not found: ${e.message}`, 'check mail.smtp.host and this machine\'s DNS');
  if (e.errorCode === 'ETIMEDOUT') {
    return failed(name, `no answer from ${where}: ${e.message}`, `check mail.smtp.host and port, the internet connection and any firewall; ${portFix}`);
  }
  if (/certificate|self[- ]signed|unable to verify/i.test(e.message)) {
    return failed(name, `the certificate of ${where} is not trusted: ${e.message}`, 'use the server\'s proper host name, or ask the mail provider which host to use');
  }
  if (e.errorCode === 'ETLS' || /tls|ssl|wrong version number/i.test(e.message)) {
    return failed(name, `TLS with ${where} failed: ${e.message}`, `${portFix}${secure ? '' : '; require_tls needs the server to offer STARTTLS'}`);
  }
  if (/ECONNREFUSED/.test(e.message) || e.errorCode === 'ECONNECTION' || e.errorCode === 'ESOCKET') {
    return failed(name, `cannot connect to ${where}: ${e.message}`, `check mail.smtp.host and port and any firewall; ${portFix}`);
  }
  return failed(name, `${where}: ${e.message}${said}`, 'check the mail.smtp settings; `pairwatch mail-test ADDRESS` shows the whole conversation');
}
