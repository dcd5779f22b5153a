import { simpleParser } from 'mailparser';
import type { SiteConfig } from '../config/schema.js';
import { readAuthVerdict } from '../inbox/authVerdict.js';
import { decideReply, type ReplyDecision } from '../inbox/decideReply.js';
import { createImapClient } from '../inbox/imapWatcher.js';
import { firstParagraph } from '../inbox/readReplyText.js';
import { toParsedReply } from '../inbox/toParsedReply.js';
import { replyAddressFor } from '../notify/noticeSettings.js';
import { messageIdDomain } from '../notify/messageId.js';

/**
 * `mail-test --await-reply`: watches the reply mailbox, read-only (BODY.PEEK, no flag, no move), for a
 * reply to the test message, and says what came back and whether the monitor would accept it. It
 * spends nothing: a running monitor still sees and answers the same reply.
 */
export interface TestReplyReport {
  from: string | null;
  words: string;
  auth: string;
  decision: ReplyDecision;
}

export interface AwaitTestReplyOptions {
  config: SiteConfig;
  env: NodeJS.ProcessEnv;
  secret: Buffer;
  testMessageId: string;
  /** UIDNEXT before the test mail went out; only later messages are looked at. */
  sinceUid: number;
  deadline: number;
  pollMs?: number;
  now?: () => number;
}

const address = (text: string) => (/<([^<>]+)>\s*$/.exec(text)?.[1] ?? text).trim().toLowerCase();

/** The folder's UIDNEXT now, so the wait looks only at what arrives after the test mail is sent. */
export async function currentUidNext(config: SiteConfig, env: NodeJS.ProcessEnv): Promise<number> {
  const imap = config.mail.imap!;
  const client = createImapClient(imap, env[imap.pass_env] ?? '', undefined, 10_000);
  client.on('error', () => undefined);
  await client.connect();
  try {
    const status = await client.status(imap.folder, { uidNext: true });
    return (status && status.uidNext) || 1;
  } finally {
    await client.logout().catch(() => client.close());
  }
}

export async function awaitTestReply(options: AwaitTestReplyOptions): Promise<TestReplyReport | null> {
  const { config } = options;
  const imap = config.mail.imap!;
  const now = options.now ?? Date.now;
  const client = createImapClient(imap, options.env[imap.pass_env] ?? '', undefined, 10_000);
  client.on('error', () => undefined);
  await client.connect();
  const seen = new Set<number>();
  try {
    while (now() < options.deadline) {
      const lock = await client.getMailboxLock(imap.folder, { readOnly: true });
      try {
        const exists = client.mailbox ? client.mailbox.exists : 0;
        const rows = exists > 0 ? await client.fetchAll(`${options.sinceUid}:*`, { uid: true, source: true }, { uid: true }) : [];
        for (const row of rows) {
          if (row.uid < options.sinceUid || seen.has(row.uid) || !row.source) continue;
          seen.add(row.uid);
          const parsed = await simpleParser(row.source);
          const from = parsed.from?.value[0]?.address?.toLowerCase() ?? null;
          const topAr = parsed.headerLines.find((h) => h.key === 'authentication-results');
          const auth = await readAuthVerdict(row.source, from, topAr ? topAr.line.slice(topAr.line.indexOf(':') + 1).trim() : null, { now: now() });
          const reply = toParsedReply(parsed, auth);
          if (![...reply.inReplyTo, ...reply.references].includes(options.testMessageId)) continue;
          const decision = decideReply(reply, {
            now: now(),
            secret: options.secret,
            contacts: config.contacts,
            ownAddresses: [address(config.mail.from), replyAddressFor(config).toLowerCase()],
            ownMessageIdDomain: `pairwatch.${messageIdDomain(config.mail.from)}`,
            knownMails: new Map(),
            spentTokens: new Set(),
            shelvers: new Set(),
            requireDkim: imap.require_dkim,
            maxShelveMs: config.web.max_shelve,
          });
          return { from, words: firstParagraph(reply.text), auth: auth.summary, decision };
        }
      } finally {
        lock.release();
      }
      await new Promise((r) => setTimeout(r, options.pollMs ?? 2000));
    }
    return null;
  } finally {
    await client.logout().catch(() => client.close());
  }
}
