import { NotifyError } from './notifyError.js';

/**
 * A failed hand-over. `scope` tells the outbox worker what to retry: 'link' (the server or the way to
 * it is down: nothing will get through, so hold the queue back) or 'message' (the server refused this
 * one message, e.g. a recipient: other mail may still go).
 */
export class MailSendError extends NotifyError {
  constructor(
    message: string,
    readonly scope: 'link' | 'message',
    readonly smtpCode: number | null = null,
    readonly smtpResponse: string | null = null,
  ) {
    super(scope === 'message' ? 'PW_MAIL_REJECTED' : 'PW_MAIL_SEND_FAILED', message);
    this.name = 'MailSendError';
  }
}

interface NodemailerLikeError {
  code?: string;
  originalCode?: string;
  responseCode?: number;
  response?: string;
  command?: string;
  message?: string;
  timeoutType?: string;
}

const MESSAGE_SCOPED_CODES = new Set(['EENVELOPE', 'EMESSAGE', 'EMAXRECIPIENTS']);

/** Turns whatever nodemailer or the file system threw into one plain sentence and a scope. */
export function toMailSendError(err: unknown, where: string): MailSendError {
  if (err instanceof MailSendError) return err;
  const e = (err ?? {}) as NodemailerLikeError;
  const code = e.code ?? '';
  const smtpCode = typeof e.responseCode === 'number' ? e.responseCode : null;
  const response = typeof e.response === 'string' ? e.response.trim() : null;
  const cause = e.originalCode ?? code;
  let text: string;
  if (cause === 'ECONNREFUSED') text = `cannot connect to ${where} (connection refused)`;
  else if (cause === 'ENOTFOUND' || code === 'EDNS') text = `cannot find the mail server ${where} (name not found)`;
  else if (code === 'ETIMEDOUT') text = `no answer from ${where} in time (${e.timeoutType ?? 'timeout'})`;
  else if (code === 'ETLS') text = `TLS with ${where} failed: ${e.message ?? 'handshake error'}`;
  else if (code === 'EAUTH') text = `${where} refused the login${response ? `: ${response}` : ''}`;
  else if (code === 'ENOAUTH') text = `${where} needs a login but no user/password is configured (mail.smtp.user, mail.smtp.pass_env)`;
  else if (code === 'EENVELOPE') text = `${where} refused the sender or a recipient${response ? `: ${response}` : ''}`;
  else if (response) text = `${where} answered "${response}"${e.command ? ` to ${e.command}` : ''}`;
  else if (cause === 'ENOSPC') text = `no space left to write mail in ${where}`;
  else if (cause === 'EACCES' || cause === 'EPERM' || cause === 'EROFS') text = `cannot write mail to ${where} (${cause})`;
  else text = `mail to ${where} failed: ${e.message ?? String(err)}`;
  // 421 means the server is closing the session: a link problem even when it comes as a reply to a recipient.
  const scope = MESSAGE_SCOPED_CODES.has(code) && smtpCode !== 421 ? 'message' : 'link';
  return new MailSendError(text, scope, smtpCode, response);
}
