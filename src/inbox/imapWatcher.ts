import { ImapFlow } from 'imapflow';
import type { ConnectionOptions } from 'node:tls';
import type { Logger } from 'pino';
import type { ImapConfig } from '../config/schema.js';
import { retryDelayMs } from '../notify/retryDelay.js';
import { inboxOffset, markInboxMessage, unmarkedInboxMessages } from '../store/inboxRepo.js';
import type { Store } from '../store/openStore.js';
import type { FetchedMessage, InboxMark, InboxOutcome } from './handleInboxMessage.js';

/**
 * Watches the reply mailbox: IMAP IDLE where the server has it (RFC 2177), a poll every `pollMs`
 * regardless, so a server without IDLE or a silently dropped IDLE still gets read. Messages are read
 * in UID order from the stored offset, so nothing is skipped and nothing handled twice across
 * restarts. A connection or login that fails keeps being retried with back-off; after
 * `failingAfter` failures in a row the shell raises "reply inbox failing". Alarm mail never waits
 * for any of this: it goes out through the outbox on its own timer.
 */
export interface ImapWatcherOptions {
  imap: ImapConfig;
  env: NodeJS.ProcessEnv;
  store: Store;
  handle: (message: FetchedMessage) => Promise<InboxOutcome>;
  logger: Logger;
  onFailing: (reason: string) => void;
  onRecovered: () => void;
  initiallyFailing?: boolean;
  pollMs?: number;
  retryFirstMs?: number;
  retryMaxMs?: number;
  failingAfter?: number;
  /** Extra TLS settings (a private CA in tests). */
  tls?: ConnectionOptions;
  now: () => number;
  /** Called before each fetched message is handled (tests stop the process here). */
  beforeHandle?: (message: FetchedMessage) => void;
}

export function imapPassword(imap: ImapConfig, env: NodeJS.ProcessEnv): string {
  const pass = env[imap.pass_env];
  if (!pass) throw new Error(`mail.imap.pass_env: the environment variable ${imap.pass_env} is not set`);
  return pass;
}

export function createImapClient(imap: ImapConfig, pass: string, tls?: ConnectionOptions, timeoutMs?: number): ImapFlow {
  return new ImapFlow({
    ...(timeoutMs !== undefined ? { connectionTimeout: timeoutMs, greetingTimeout: timeoutMs } : {}),
    host: imap.host,
    port: imap.port,
    secure: imap.secure,
    auth: { user: imap.user, pass },
    logger: false,
    // imapflow's default waits 15 s of quiet before IDLE; a reply should not wait that long to be seen.
    autoIdleDelay: 500,
    ...(tls ? { tls } : {}),
  });
}

export function createImapWatcher(options: ImapWatcherOptions) {
  const { imap, store, logger } = options;
  const pollMs = options.pollMs ?? 30_000;
  const failingAfter = options.failingAfter ?? 3;
  let stopped = false;
  let failing = options.initiallyFailing ?? false;
  let failures = 0;
  let client: ImapFlow | null = null;
  let wake: (() => void) | null = null;
  let running: Promise<void> | null = null;

  // New mail announced while a read is under way must not wait for the next poll: remembered here.
  let woken = false;
  const signal = () => {
    const w = wake;
    wake = null;
    if (w) w();
    else woken = true;
  };
  const sleep = (ms: number) =>
    new Promise<void>((resolve) => {
      if (woken) {
        woken = false;
        resolve();
        return;
      }
      const timer = setTimeout(() => {
        wake = null;
        resolve();
      }, ms);
      wake = () => {
        clearTimeout(timer);
        woken = false;
        resolve();
      };
    });

  async function mark(c: ImapFlow, uid: number, markAs: InboxMark, messageKey: string): Promise<void> {
    if (markAs === 'none') return;
    const range = String(uid);
    if (markAs === 'flag') await c.messageFlagsAdd(range, ['\\Flagged'], { uid: true });
    else {
      await c.messageFlagsAdd(range, ['\\Seen'], { uid: true });
      if (imap.done_folder) await c.messageMove(range, imap.done_folder, { uid: true });
    }
    markInboxMessage(store.db, messageKey, options.now());
  }

  async function drain(c: ImapFlow): Promise<void> {
    // A poll must ask: the server's news of new mail (EXISTS) comes only in answer to a command.
    await c.noop();
    const mailbox = c.mailbox;
    if (!mailbox) throw new Error(`folder ${imap.folder} is not open`);
    const uidValidity = Number(mailbox.uidValidity);
    // Marking that a stop interrupted (decided, committed, not yet flagged or moved) is finished first.
    for (const pending of unmarkedInboxMessages(store.db, imap.folder)) {
      if (pending.uidValidity !== uidValidity) continue;
      await mark(c, pending.uid, pending.verdict === 'refused' ? 'flag' : 'handled', pending.messageKey);
    }
    const offset = inboxOffset(store.db, imap.folder);
    // A new UIDVALIDITY means UIDs start over (RFC 9051 §2.3.1.1); Message-IDs keep replays out.
    const from = offset && offset.uidValidity === uidValidity ? offset.lastUid + 1 : 1;
    if (mailbox.uidNext !== undefined && mailbox.uidNext <= from && mailbox.exists === 0) return;
    const fetched = await c.fetchAll(`${from}:*`, { uid: true, source: true }, { uid: true });
    for (const msg of fetched.filter((m) => m.uid >= from && m.source).sort((a, b) => a.uid - b.uid)) {
      const message: FetchedMessage = { folder: imap.folder, uidValidity, uid: msg.uid, source: msg.source! };
      logger.debug({ uid: msg.uid, folder: imap.folder }, 'reply inbox: fetched a message');
      options.beforeHandle?.(message);
      const outcome = await options.handle(message);
      await mark(c, msg.uid, outcome.mark, outcome.messageKey);
    }
  }

  async function session(): Promise<void> {
    const c = createImapClient(imap, imapPassword(imap, options.env), options.tls);
    client = c;
    c.on('error', (err: Error) => logger.warn({ err: err.message }, `reply inbox connection error: ${err.message}`));
    c.on('exists', () => signal());
    const closed = new Promise<void>((resolve) => c.once('close', () => resolve()));
    try {
      await c.connect();
      if (imap.done_folder) {
        // A missing done_folder would fail every move; made once here, beside the folder being watched.
        const made = await c.mailboxCreate(imap.done_folder);
        if (made.created) logger.info({ folder: imap.done_folder }, `reply inbox: created the folder ${imap.done_folder} for handled replies`);
      }
      // The folder is locked only while it is read: imapflow starts IDLE (RFC 2177) only when no lock is held.
      const drainLocked = async () => {
        const lock = await c.getMailboxLock(imap.folder);
        try {
          await drain(c);
        } finally {
          lock.release();
        }
      };
      let open = true;
      void closed.then(() => {
        open = false;
        signal();
      });
      await drainLocked();
      failures = 0;
      if (failing) {
        failing = false;
        options.onRecovered();
      }
      logger.info({ host: imap.host, folder: imap.folder, idle: c.capabilities.has('IDLE') }, `reply inbox: watching ${imap.folder} on ${imap.host}`);
      while (!stopped && open && c.usable) {
        await sleep(pollMs);
        if (stopped || !open || !c.usable) break;
        await drainLocked();
      }
      if (!stopped) throw new Error('the server closed the connection');
    } finally {
      client = null;
      await c.logout().catch(() => c.close());
    }
  }

  async function run(): Promise<void> {
    while (!stopped) {
      try {
        await session();
      } catch (err) {
        if (stopped) break;
        failures += 1;
        const reason = (err as { responseText?: string }).responseText ?? (err as Error).message;
        logger.warn({ failures, reason }, `reply inbox: ${reason}; retrying`);
        if (!failing && failures >= failingAfter) {
          failing = true;
          options.onFailing(reason);
        }
        await sleep(retryDelayMs(failures, { firstMs: options.retryFirstMs ?? 5_000, maxMs: options.retryMaxMs ?? 300_000 }));
      }
    }
  }

  return {
    start(): void {
      if (!running) running = run();
    },
    /** Reads the mailbox now instead of at the next poll. */
    checkNow: signal,
    isFailing: () => failing,
    async stop(): Promise<void> {
      stopped = true;
      signal();
      client?.close();
      await running;
    },
  };
}

export type ImapWatcher = ReturnType<typeof createImapWatcher>;
