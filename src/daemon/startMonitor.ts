import { mkdirSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import type { Logger } from 'pino';
import type { SiteConfig } from '../config/schema.js';
import { createDecoderLink } from '../ingest/createDecoderLink.js';
import { loadOrCreateAckSecret } from '../notify/ackSecret.js';
import { composeDailyReport } from '../notify/composeDailyReport.js';
import { composeLifecycleMail, type LifecycleEvent } from '../notify/composeLifecycleMail.js';
import { dropFolderFor } from '../notify/dropFolder.js';
import { flushDigests } from '../notify/flushDigests.js';
import { nextNoticeDueAt } from '../notify/noticeQueue.js';
import { createDropFolderTransport, createSmtpTransport, type MailTransport } from '../notify/mailTransport.js';
import { nextReportAt } from '../notify/nextReportAt.js';
import { mailbox, noticeSettingsFromConfig, publicUrlFor } from '../notify/noticeSettings.js';
import { createOutboxWorker } from '../notify/outboxWorker.js';
import { createMetrics } from '../ops/metrics.js';
import { createStallGuard } from '../ops/stallGuard.js';
import { createDurableWriter } from '../store/createDurableWriter.js';
import { openStore, type Store } from '../store/openStore.js';
import { enqueueOutbox } from '../store/outboxRepo.js';
import { buildWebServer } from '../web/buildWebServer.js';
import { webListenWarnings } from '../web/webListenWarnings.js';
import { createLiveFeed } from './createLiveFeed.js';
import { createMetricsSync } from './createMetricsSync.js';
import { createReadModel } from './createReadModel.js';
import { createWebCommands } from './createWebCommands.js';
import { gatherDailyReport } from './gatherDailyReport.js';
import { composeStorageAlert } from './composeStorageAlert.js';
import { createMonitorCore } from './monitorCore.js';
import { runMaintenance } from './runMaintenance.js';
import { createReplyHandler } from '../inbox/handleInboxMessage.js';
import { createImapWatcher, type ImapWatcher } from '../inbox/imapWatcher.js';
import { messageIdDomain } from '../notify/messageId.js';

/**
 * Wires the monitor together — the one place where the pure core meets serial ports, SQLite, mail
 * and HTTP — and owns every timer. `now` is injectable so tests can drive the clock.
 */
export interface StartMonitorOptions {
  config: SiteConfig;
  /** Folder the config file is in: `sim:FILE` ports are resolved against it. */
  configDir: string;
  logger: Logger;
  now?: () => number;
  /** Override the mail transport (tests). Default: SMTP when configured, else .eml files. */
  transport?: MailTransport;
  /** Listen for HTTP (default true). Tests may use `monitor.web.inject` instead. */
  listen?: boolean;
  env?: NodeJS.ProcessEnv;
  version?: string;
  /** Send the "monitoring started" mail (default true). */
  announce?: boolean;
  /** Reply inbox overrides (tests): TLS settings, poll interval, retry timing. */
  inbox?: { tls?: import('node:tls').ConnectionOptions; pollMs?: number; retryFirstMs?: number; retryMaxMs?: number; failingAfter?: number };
}

const FAST_TICK_MS = 250;
const NOTIFY_TICK_MS = 1000;
const MAINTENANCE_CHECK_MS = 3_600_000;

export async function startMonitor(options: StartMonitorOptions) {
  const { config, logger } = options;
  const now = options.now ?? Date.now;
  const env = options.env ?? process.env;
  const startedAt = now();
  const dbPath = resolve(config.storage.path);
  const dataDir = dirname(dbPath);
  mkdirSync(dataDir, { recursive: true });

  const ackSecret = loadOrCreateAckSecret(dataDir);
  const noticeSettings = noticeSettingsFromConfig(config, ackSecret);
  let transport: MailTransport;
  if (options.transport) transport = options.transport;
  else if (config.mail.smtp) transport = createSmtpTransport(config.mail.smtp, env);
  else {
    const folder = resolve(dropFolderFor(config));
    transport = createDropFolderTransport(folder);
    logger.info({ folder }, `no SMTP server configured: mail is written as .eml files into ${folder}`);
  }
  // Who hears about the monitor itself: the first step of the default policy, else the report contacts.
  const storageAlertTo = () => {
    const first = config.escalation.default?.steps[0]?.notify ?? config.report.notify;
    return config.contacts.filter((c) => first.length === 0 || first.includes(c.id)).map((c) => mailbox(c));
  };

  const store: Store = openStore({ path: dbPath });
  if (store.opened.backupFile) logger.info({ backup: store.opened.backupFile }, 'database backed up before migrating');

  // The core is created after the writer, which must report to it: bind late.
  let core: ReturnType<typeof createMonitorCore> | null = null;
  const writer = createDurableWriter({
    store,
    now,
    onFailing(failure) {
      logger.error({ failure }, `storage failing: ${failure.message} — classifying in memory, retrying`);
      core?.raiseSystem('storage-failing', now());
      // Every channel that still works: the board and /healthz read memory; mail must bypass the outbox.
      const to = storageAlertTo();
      if (to.length > 0) {
        transport
          .send(composeStorageAlert(config, failure, now(), to, noticeSettings.newMessageId()))
          .then(() => logger.info('storage-failing mail sent directly'))
          .catch((err: unknown) => logger.error({ err }, `could not mail the storage failure either: ${(err as Error).message}`));
      }
    },
    onRecovered(info) {
      logger.info(info, 'storage writing again');
      core?.clearSystem('storage-failing', now());
    },
    onRejected(label, error) {
      logger.error({ label, err: error }, `a write was refused by the database and dropped (${label})`);
    },
  });
  const live = createLiveFeed();
  let onAlarmsChanged: () => void = () => undefined;
  core = createMonitorCore({
    config,
    store,
    writer,
    logger,
    now: startedAt,
    onChange: (what) => {
      live.publish({ type: what });
      if (what === 'alarms') onAlarmsChanged();
    },
  });
  const monitorCore = core;

  let mailFailures = 0;
  const worker = createOutboxWorker({
    db: store.db,
    transport,
    now,
    failingAfter: config.mail.failing_after,
    retryFirstMs: config.mail.retry_first,
    retryMaxMs: config.mail.retry_max,
    initiallyFailing: monitorCore.openAlarms().some((a) => a.condition === 'mail-failing' && a.active),
    onFailing: (reason) => {
      logger.error({ reason }, `mail failing: ${reason}`);
      monitorCore.raiseSystem('mail-failing', now());
    },
    onRecovered: () => {
      logger.info('mail flowing again');
      monitorCore.clearSystem('mail-failing', now());
    },
    onSent: (row) => logger.info({ messageId: row.messageId, to: row.to, subject: row.subject }, `mail sent: ${row.subject}`),
    onFailed: (row, err) => {
      mailFailures += 1;
      logger.warn({ messageId: row.messageId, err: err.message }, `mail not sent yet: ${err.message}`);
    },
    logger,
  });

  const read = createReadModel({ config, store, core: monitorCore, writer, mailFailing: () => worker.isFailing(), now });
  const commands = createWebCommands(config, monitorCore, now);
  const web = buildWebServer({ config, db: store.db, read, commands, live, ackSecret, now, logger });
  for (const warning of webListenWarnings(config)) logger.warn(warning);

  // Prometheus scrape, without auth like /healthz: keep web.listen on a trusted network.
  const metrics = createMetrics();
  const syncMetrics = createMetricsSync({ config, core: monitorCore, store, metrics, mailFailures: () => mailFailures });
  web.get('/metrics', async (_request, reply) => {
    syncMetrics();
    return reply.type(metrics.contentType).send(await metrics.render());
  });
  // Listen before any timer or decoder link starts, so a port already taken fails the start cleanly.
  let address: string | null = null;
  if (options.listen !== false) {
    const [host, portText] = splitListen(config.web.listen);
    try {
      address = await web.listen({ host, port: Number(portText) });
    } catch (err) {
      await web.close().catch(() => undefined);
      store.close();
      const code = (err as NodeJS.ErrnoException).code;
      throw Object.assign(new Error(`web.listen: cannot listen on ${config.web.listen}: ${code === 'EADDRINUSE' ? 'the port is already in use (is pairwatch already running?)' : (err as Error).message}`), { code: 'PW_WEB_LISTEN_FAILED' });
    }
    logger.info({ address }, `web server listening on ${address}`);
  }

  const stallGuard = createStallGuard({
    onStall: (report) => {
      metrics.countStall(report.activity, report.blockedMs);
      logger.warn(report, `event loop was blocked for ${report.blockedMs} ms (while: ${report.activities.join(', ') || 'unknown'})`);
    },
  });
  stallGuard.start();

  const envelopeTo = (ids: readonly string[]) =>
    config.contacts.filter((c) => ids.length === 0 || ids.includes(c.id)).map((c) => mailbox(c));
  // The daily report is the proof of life: with no `report.notify`, every contact gets it.
  const reportTo = envelopeTo(config.report.notify);
  const lifecycleTo = reportTo;
  const envelope = (to: string[]) => ({ from: config.mail.from, to, newMessageId: noticeSettings.newMessageId });
  let nextReport = nextReportAt(startedAt, config.report.at, config.site.timezone);

  const enqueue = (label: string, message: Parameters<typeof enqueueOutbox>[1]) => {
    writer.commit(label, (s) => {
      enqueueOutbox(s.db, message, now());
    });
  };
  const lifecycleMail = (event: LifecycleEvent, reason: string | null) => {
    if (lifecycleTo.length === 0) return;
    enqueue(
      `${event} mail`,
      composeLifecycleMail(
        event,
        {
          siteName: config.site.name,
          timeZone: config.site.timezone,
          publicUrl: publicUrlFor(config.web),
          at: now(),
          loopCount: config.loops.length,
          decoderCount: config.decoders.length,
          nextReportAt: reportTo.length > 0 ? nextReport : null,
          reason,
          version: options.version ?? null,
        },
        envelope(lifecycleTo),
      ),
    );
  };

  // --- timers -----------------------------------------------------------------------------------
  const timers: NodeJS.Timeout[] = [];
  let stopping = false;
  let notifyBusy = false;

  const fast = setInterval(() => {
    const t = now();
    monitorCore.tick(t);
    if (writer.pending() > 0) writer.flush();
  }, FAST_TICK_MS);
  timers.push(fast);

  async function runNotifications(flushAll = false): Promise<void> {
    if (notifyBusy) return;
    notifyBusy = true;
    try {
      if (writer.status().failing === null) {
        // On a stop, notices still inside their grouping window go out now rather than wait for a restart.
        flushDigests(store.db, now() + (flushAll ? config.mail.group_window : 0), noticeSettings);
        await worker.runOnce();
      }
    } catch (err) {
      logger.error({ err }, `notification round failed: ${(err as Error).message}`);
    } finally {
      notifyBusy = false;
    }
  }
  timers.push(setInterval(() => void runNotifications(), NOTIFY_TICK_MS));

  // Besides the once-a-second round, wake exactly when the earliest queued notice falls due, so an
  // alarm's mail is not held up to a second behind its grouping window.
  let notifyWake: NodeJS.Timeout | null = null;
  let notifyWakeAt = Infinity;
  const wakeNotifications = () => {
    if (stopping) return;
    const due = nextNoticeDueAt(store.db);
    if (due === null || due >= notifyWakeAt) return;
    if (notifyWake) clearTimeout(notifyWake);
    notifyWakeAt = due;
    notifyWake = setTimeout(() => {
      notifyWake = null;
      notifyWakeAt = Infinity;
      void runNotifications();
    }, Math.max(0, due - now()));
  };
  onAlarmsChanged = wakeNotifications;

  const scheduleMinute = () => {
    const t = now();
    const nextBoundary = Math.floor(t / 60_000) * 60_000 + 60_000;
    const timer = setTimeout(() => {
      if (stopping) return;
      monitorCore.minute(now(), nextBoundary - 60_000);
      scheduleMinute();
    }, Math.max(0, nextBoundary - t));
    timers.push(timer);
  };
  scheduleMinute();

  const scheduleReport = () => {
    const delay = Math.max(0, Math.min(nextReport - now(), 6 * 3_600_000));
    const timer = setTimeout(() => {
      if (stopping) return;
      const t = now();
      if (t >= nextReport) {
        const following = nextReportAt(t + 1000, config.report.at, config.site.timezone);
        if (reportTo.length > 0) {
          const data = gatherDailyReport({ config, store, read, now: t, nextReportAt: following, monitorStartedAt: startedAt });
          enqueue('daily report', composeDailyReport(data, envelope(reportTo)));
          logger.info({ next: new Date(following).toISOString() }, 'daily report queued');
        }
        nextReport = following;
      }
      scheduleReport();
    }, delay);
    timers.push(timer);
  };
  scheduleReport();

  const maintenance = () => {
    if (stopping) return;
    stallGuard
      .run('maintenance', () => runMaintenance({ config, store, now: now(), logger }))
      .catch((err: unknown) => logger.error({ err }, `daily maintenance failed: ${(err as Error).message}`));
  };
  timers.push(setInterval(maintenance, MAINTENANCE_CHECK_MS));
  timers.push(setTimeout(maintenance, 60_000));

  // --- decoders -----------------------------------------------------------------------------------
  const links = config.decoders.map((decoder) =>
    createDecoderLink({
      port: decoder.port,
      baud: decoder.baud,
      scenarioBaseDir: options.configDir,
      onLine: (line) => monitorCore.line(decoder.id, line, now()),
      // A bug in handling one line must not take the monitor down: log it loudly and carry on.
      onCallbackError: (err) => logger.error({ err, decoderId: decoder.id }, `error handling decoder input: ${(err as Error).message}`),
      onStatus: (status) => {
        // Closing the links on a deliberate stop is not the decoder going offline.
        if (stopping) return;
        if (status.state === 'disconnected') logger.warn({ decoderId: decoder.id, reason: status.reason }, `decoder ${decoder.id} port: ${status.reason ?? 'disconnected'}`);
        monitorCore.linkStatus(decoder.id, status, now());
      },
    }),
  );

  // --- reply inbox (mail.imap): a reply to an alarm mail acknowledges it ---------------------------
  let inbox: ImapWatcher | null = null;
  if (config.mail.imap) {
    const replies = createReplyHandler({
      config,
      store,
      writer,
      core: monitorCore,
      secret: ackSecret,
      newMessageId: noticeSettings.newMessageId,
      ownMessageIdDomain: `pairwatch.${messageIdDomain(config.mail.from)}`,
      now,
      logger,
    });
    inbox = createImapWatcher({
      imap: config.mail.imap,
      env,
      store,
      handle: async (message) => {
        const outcome = await replies.handle(message);
        if (outcome.mark === 'handled') wakeNotifications();
        return outcome;
      },
      logger,
      now,
      initiallyFailing: monitorCore.openAlarms().some((a) => a.condition === 'inbox-failing' && a.active),
      onFailing: (reason) => monitorCore.raiseSystem('inbox-failing', now()),
      onRecovered: () => monitorCore.clearSystem('inbox-failing', now()),
      ...options.inbox,
    });
    inbox.start();
  }
  // --- end reply inbox ---

  if (options.announce !== false) lifecycleMail('started', null);
  logger.info({ site: config.site.name, loops: config.loops.length, decoders: config.decoders.length }, `monitoring ${config.site.name}: ${config.loops.length} loop(s)`);

  /** Graceful stop: finish writes, queue and try to send "monitoring stopped", close the database. */
  async function stop(reason: string, deadlineMs = 8000): Promise<void> {
    if (stopping) return;
    stopping = true;
    const deadline = now() + deadlineMs;
    for (const timer of timers) clearTimeout(timer);
    if (notifyWake) clearTimeout(notifyWake);
    stallGuard.stop();
    await inbox?.stop();
    await Promise.allSettled(links.map((link) => link.close()));
    monitorCore.flushEdges();
    lifecycleMail('stopped', reason);
    writer.flush();
    // Try to get pending mail out, but never past the deadline: the outbox keeps what is left.
    const remaining = Math.max(0, deadline - now());
    let giveUp: NodeJS.Timeout | undefined;
    await Promise.race([runNotifications(true), new Promise((r) => (giveUp = setTimeout(r, remaining)))]);
    clearTimeout(giveUp);
    await web.close().catch(() => undefined);
    writer.flush();
    store.close();
    logger.info({ reason }, 'monitor stopped');
  }

  return { inbox, core: monitorCore, store, writer, web, worker, read, commands, address, stop, runNotifications, dataDir, mailFolder: config.mail.smtp ? null : resolve(dropFolderFor(config)) };
}

export type Monitor = Awaited<ReturnType<typeof startMonitor>>;

export function splitListen(listen: string): [string, string] {
  const at = listen.lastIndexOf(':');
  const host = listen.slice(0, at).replace(/^\[(.*)\]$/, '$1');
  return [host, listen.slice(at + 1)];
}
