import type { ConnectionOptions } from 'node:tls';
import type { MailConfig } from '../../config/schema.js';
import { createImapClient } from '../../inbox/imapWatcher.js';
import type { CheckResult } from './checkResult.js';
import { failed, passed, warned } from './checkResult.js';

/**
 * The reply inbox (mail.imap): can we reach the IMAP server, log in with the app password, and open
 * the watched folder (and done_folder)? Read-only: no message is fetched, flagged or moved.
 */
const DOCTOR_TIMEOUT_MS = 10_000;

export async function checkImap(mail: MailConfig, env: NodeJS.ProcessEnv, tls?: ConnectionOptions): Promise<CheckResult> {
  const name = 'imap';
  const imap = mail.imap;
  if (!imap) return passed(name, 'skipped: no mail.imap in the config, so replies to alarm mail are not read (acknowledge on the board or by link)');
  const pass = env[imap.pass_env];
  if (!pass) {
    return failed(
      name,
      `the password variable ${imap.pass_env} (mail.imap.pass_env) is not set in this environment`,
      `run doctor with it set (sudo --preserve-env=${imap.pass_env} …); the service reads it from /etc/pairwatch/env as ${imap.pass_env}=…`,
    );
  }
  const where = `${imap.host}:${imap.port}`;
  const client = createImapClient(imap, pass, tls, DOCTOR_TIMEOUT_MS);
  client.on('error', () => undefined);
  try {
    await client.connect();
  } catch (err) {
    const e = err as { authenticationFailed?: boolean; responseText?: string; code?: string; message?: string };
    if (e.authenticationFailed) {
      return failed(name, `${where} refused the login for ${imap.user}: ${e.responseText ?? e.message ?? 'authentication failed'}`, 'check mail.imap.user and the app password in pass_env; most providers want an app password, not the account password, and IMAP switched on');
    }
    return failed(name, `cannot reach ${where}: ${e.message ?? String(err)}`, imap.secure ? 'check mail.imap.host and port (993 is IMAP over TLS) and that this machine may connect out to it' : 'check mail.imap.host and port; with secure: false the server must take plain IMAP (port 143)');
  }
  try {
    const folders = [imap.folder, ...(imap.done_folder ? [imap.done_folder] : [])];
    const found: string[] = [];
    for (const folder of folders) {
      try {
        const status = await client.status(folder, { messages: true, unseen: true });
        if (!status) throw new Error(`no STATUS for ${folder}`);
        found.push(`${folder} (${status.messages ?? 0} messages, ${status.unseen ?? 0} unread)`);
      } catch {
        if (folder === imap.done_folder) {
          return warned(name, `logged in to ${where} as ${imap.user}; ${found.join(', ')}; done_folder ${folder} does not exist yet`, 'the monitor creates it when it starts watching; or create it in your mail client');
        }
        return failed(name, `logged in to ${where} as ${imap.user}, but there is no folder ${folder}`, 'set mail.imap.folder to a folder that exists (INBOX is the usual one)');
      }
    }
    const idle = client.capabilities.has('IDLE') ? 'IDLE offered, so replies are seen at once' : 'no IDLE: the monitor polls every 30 s';
    const security = imap.secure ? 'TLS' : 'no encryption';
    const finding = `logged in to ${where} as ${imap.user} (${security}); ${found.join(', ')}; ${idle}`;
    if (!imap.secure && !/^(127\.|::1$|localhost$)/.test(imap.host)) {
      return warned(name, finding, 'the password and replies travel in clear: use port 993 with secure: true');
    }
    return passed(name, finding);
  } finally {
    await client.logout().catch(() => client.close());
  }
}
