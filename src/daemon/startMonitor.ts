import { statSync } from 'node:fs';
import { dirname, resolve } from 'node:path';
import type { Logger } from 'pino';
import type { SiteConfig } from '../config/schema.js';
import { createDecoderLink } from '../ingest/createDecoderLink.js';
import { loadOrCreateAckSecret } from '../notify/ackSecret.js';
import { composeDailyReport } from '../notify/composeDailyReport.js';
import { composeLifecycleMail, type LifecycleEvent } from '../notify/composeLifecycleMail.js';
import { flushDigests } from '../notify/flushDigests.js';
import { nextNoticeDueAt } from '../notify/noticeQueue.js';
import { createDropFolderTransport, createSmtpTransport, dropFolderFor, type MailTransport } from '../notify/mailTransport.js';
import { nextReportAt } from '../notify/nextReportAt.js';
import { mailbox, noticeSettingsFromConfig, publicUrlFor } from '../notify/noticeSettings.js';
import { createOutboxWorker } from '../notify/outboxWorker.js';
import { createMetrics } from '../ops/metrics.js';
import { createStallGuard } from '../ops/stallGuard.js';
import { createDurableWriter, fileGoneFailure, type StorageFailure } from '../store/createDurableWriter.js';
import { openStore, type Store } from '../store/openStore.js';
import { integrityProblems, restoreAdvice } from '../store/backup.js';
import { makePrivateDir } from '../store/privateFiles.js';
import { lockFileFor } from '../store/storeLock.js';
import { enqueueOutbox, recordMailAudit } from '../store/outboxRepo.js';
import { insertPendingNotice } from '../store/pendingNoticeRepo.js';
import { buildWebServer } from '../web/buildWebServer.js';
import { webListenWarnings } from '../web/webListenWarnings.js';
import { createLiveFeed } from './createLiveFeed.js';
import { createMetricsSync } from './createMetricsSync.js';
import { createReadModel } from './createReadModel.js';
import { createWebCommands } from './createWebCommands.js';
import { gatherDailyReport } from './gatherDailyReport.js';
import { composeStorageAlert } from './composeStorageAlert.js';
import { createDirectNotices } from './createDirectNotices.js';
import { createMonitorCore } from './monitorCore.js';
import { alarmEventsOf } from '../mqtt/alarmEvents.js';
import { enqueueAlarmEvents } from '../mqtt/mqttOutbox.js';
import type { SitePublisher } from '../mqtt/sitePublisher.js';
import { findUnsavedAlarms, reserveSpace, writeUnsavedAlarms } from './writeUnsavedAlarms.js';
import { runMaintenance } from './runMaintenance.js';
import { countOf } from '../model/plural.js';
import type { ImapWatcher } from '../inbox/imapWatcher.js';
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
  makePrivateDir(dataDir);

  const ackSecret = loadOrCreateAckSecret(dataDir);
  reserveSpace(dataDir);
  for (const file of findUnsavedAlarms(dataDir)) {
    logger.error({ file }, `a previous stop could not store everything (the disk was full): what was lost is listed in ${file}; delete the file once read`);
  }
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

  const store: Store = openStore({ path: dbPath, cacheKib: config.storage.cache_kib });
  if (store.opened.backupFile) logger.info({ backup: store.opened.backupFile }, 'database backed up before migrating');

  // The core is created after the writer, which must report to it: bind late.
  let core: ReturnType<typeof createMonitorCore> | null = null;
  const watchFile = fileIdentityGuard([dbPath, lockFileFor(dbPath)]);
  const writer = createDurableWriter({
    store,
    now,
    guard: watchFile,
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
  // Alarm mail while the disk fails goes straight from memory (see createDirectNotices).
  const directNotices = createDirectNotices({
    settings: noticeSettings,
    transport,
    groupWindowMs: config.mail.group_window,
    retryFirstMs: config.mail.retry_first,
    retryMaxMs: config.mail.retry_max,
  });
  const live = createLiveFeed();
  let onAlarmsChanged: () => void = () => undefined;
  let publisher: SitePublisher | null = null; // mqtt (issue 12)
  core = createMonitorCore({
    config,
    store,
    writer,
    logger,
    now: startedAt,
    directNotices,
    onChange: (what) => {
      live.publish({ type: what });
      if (what === 'alarms') onAlarmsChanged();
      publisher?.changed();
      if (what === 'alarms') publisher?.eventsQueued();
    },
    ...(config.mqtt && { onAlarmEffects: (s, effects, t) => void enqueueAlarmEvents(s.db, alarmEventsOf(effects), t) }),
  });
  const monitorCore = core;
  // quick_check at every start (issue 16 item 10): damage in the middle of the file is otherwise only
  // found when a query happens to read that page. The full integrity_check runs in the daily maintenance.
  const damage = integrityProblems(store.db, 'quick');
  if (damage.length > 0) reportDamage('quick_check', damage);
  else monitorCore.clearSystem('storage-damaged', startedAt);
  function reportDamage(check: string, problems: readonly string[]): void {
    logger.error({ problems }, `the database ${dbPath} is damaged (${check}: ${problems.slice(0, 3).join('; ')}); ${restoreAdvice(dbPath)}`);
    monitorCore.raiseSystem('storage-damaged', now());
  }

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
    onFailed: (row, err) => {
      mailFailures += 1;
      logger.warn({ messageId: row.messageId, err: err.message }, `mail not sent yet: ${err.message}`);
    },
    logger,
  });

  const read = createReadModel({ config, store, core: monitorCore, writer, mailFailing: () => worker.isFailing(), now });
  const commands = createWebCommands(config, monitorCore, now);
  const metrics = createMetrics();
  const syncMetrics = createMetricsSync({ config, core: monitorCore, store, metrics, mailFailures: () => mailFailures });
  const metricsSource = {
    contentType: metrics.contentType,
    render: () => {
      syncMetrics();
      return metrics.render();
    },
  };
  const web = buildWebServer({ config, db: store.db, read, commands, live, ackSecret, now, logger, metrics: metricsSource });
  for (const warning of webListenWarnings(config)) logger.warn(warning);

  // Listen before any timer or decoder link starts, so a port already taken fails the start cleanly.
  let address: string | null = null;
  if (options.listen !== false) {
    const [host, portText] = splitListen(config.web.listen);
    try {
      // fastify logs the one "listening" line itself; ours would be a second line for the same event.
      address = await web.listen({ host, port: Number(portText), listenTextResolver: (at) => `web server listening on ${at}` });
    } catch (err) {
      await web.close().catch(() => undefined);
      store.close();
      const code = (err as NodeJS.ErrnoException).code;
      throw Object.assign(new Error(`web.listen: cannot listen on ${config.web.listen}: ${code === 'EADDRINUSE' ? 'the port is already in use (is pairwatch already running?)' : (err as Error).message}`), { code: 'PW_WEB_LISTEN_FAILED' });
    }
  }

  // --- mqtt (issue 12): states and alarm events to an MQTT 5 broker -------------------------------
  // The broker client and the mail parser, IMAP client and DKIM checker below are loaded only when
  // configured: together they are some 50 MB of resident memory a site without them never needs.
  const mqttConfig = config.mqtt;
  if (mqttConfig) {
    const { startSitePublisher } = await import('../mqtt/sitePublisher.js');
    const started = () => startSitePublisher({
      config: mqttConfig,
      site: { name: config.site.name, timezone: config.site.timezone, url: config.web.public_url ?? null },
      db: store.db,
      read,
      commands,
      now,
      logger,
      version: options.version ?? null,
      startedAt,
      env,
      initiallyUnreachable: monitorCore.openAlarms().some((a) => a.condition === 'broker-unreachable' && a.active),
      onUnreachable: (reason) => {
        logger.error({ reason }, `broker unreachable: ${reason}`);
        monitorCore.raiseSystem('broker-unreachable', now());
      },
      onReachable: () => monitorCore.clearSystem('broker-unreachable', now()),
    });
    try {
      publisher = started();
    } catch (err) {
      await web.close().catch(() => undefined);
      store.close();
      throw err;
    }
  }
  // --- end mqtt ------------------------------------------------------------------------------------

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
    writer.check();
    monitorCore.tick(t);
    if (writer.pending() > 0) writer.flush();
    armSilence();
  }, FAST_TICK_MS);
  timers.push(fast);

  // --- offline at the exact silence deadline (issue 14) -----------------------------------------
  // The fast tick alone notices silence up to FAST_TICK_MS late. One timer sleeps until the earliest
  // deadline; a line that arrived meanwhile only moved the deadline on, so the timer then re-arms.
  // The fast tick arms it again once a decoder is back from offline. At most one wake-up per silence
  // period. Unref'd: it never keeps a stopping process alive.
  let silenceTimer: NodeJS.Timeout | null = null;
  function armSilence(): void {
    if (silenceTimer !== null || stopping) return;
    const at = monitorCore.nextSilenceAtMs();
    if (at === null) return;
    silenceTimer = setTimeout(() => {
      silenceTimer = null;
      if (stopping) return;
      const t = now();
      const due = monitorCore.nextSilenceAtMs();
      if (due !== null && t >= due) monitorCore.handle({ kind: 'clock' }, t);
      armSilence();
    }, Math.max(1, at - now()));
    silenceTimer.unref();
  }
  armSilence();
  // --- end of offline at the exact silence deadline ---------------------------------------------

  async function runNotifications(flushAll = false): Promise<void> {
    if (notifyBusy) return;
    notifyBusy = true;
    try {
      if (writer.status().failing === null) {
        if (directNotices.pending() > 0) {
          // Storage writes again: notices the direct mailer could not get out yet join the outbox, due now.
          const back = directNotices.handBack(now());
          writer.commit('direct notices handed back', (s) => {
            for (const notice of back) insertPendingNotice(s.db, notice);
          });
        }
        // On a stop, notices still inside their grouping window go out now rather than wait for a restart.
        flushDigests(store.db, now() + (flushAll ? config.mail.group_window : 0), noticeSettings);
        await worker.runOnce();
      } else {
        await mailDirectly(flushAll);
      }
    } catch (err) {
      logger.error({ err }, `notification round failed: ${(err as Error).message}`);
    } finally {
      notifyBusy = false;
    }
  }
  timers.push(setInterval(() => void runNotifications(), NOTIFY_TICK_MS));

  /** While storage fails: alarm notices straight from memory; the audit of each send waits in the writer like any write. */
  async function mailDirectly(flushAll: boolean): Promise<void> {
    for (const sent of await directNotices.round(now(), flushAll)) {
      logger.info({ alarmIds: sent.alarmIds, contactId: sent.contactId }, `mail sent directly while storage fails: ${sent.subject}`);
      writer.commit('direct mail audit', (s) => {
        recordMailAudit(s.db, { at: sent.at, action: 'mail-sent', alarmIds: sent.alarmIds, note: `${sent.subject} → ${sent.contactId} (sent directly while storage was failing)`.slice(0, 1000) });
      });
    }
  }

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
      .run('maintenance', () =>
        runMaintenance({
          config,
          store,
          now: now(),
          logger,
          onDamaged: () => monitorCore.raiseSystem('storage-damaged', now()),
          onIntact: () => monitorCore.clearSystem('storage-damaged', now()),
        }),
      )
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
    const [{ createReplyHandler }, { createImapWatcher }] = await Promise.all([import('../inbox/handleInboxMessage.js'), import('../inbox/imapWatcher.js')]);
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
  logger.info({ site: config.site.name, loops: config.loops.length, decoders: config.decoders.length }, `monitoring ${config.site.name}: ${config.loops.length} ${config.loops.length === 1 ? 'loop' : 'loops'}`);

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
    monitorCore.closeSessions(now(), `monitor ${reason}`);
    lifecycleMail('stopped', reason);
    writer.flush();
    // Try to get pending mail out, but never past the deadline: the outbox keeps what is left.
    const remaining = Math.max(0, deadline - now());
    let giveUp: NodeJS.Timeout | undefined;
    await Promise.race([runNotifications(true), new Promise((r) => (giveUp = setTimeout(r, remaining)))]);
    clearTimeout(giveUp);
    await web.close().catch(() => undefined);
    await publisher?.stop(); // mqtt (issue 12)
    writer.flush();
    if (writer.pending() > 0 || directNotices.pending() > 0) {
      // The disk still refuses: say what is lost with this process, and keep the alarms somewhere that survives it.
      // The data folder itself may be what went missing: then the folder that held it.
      const file = writeUnsavedAlarms([dataDir, dirname(dataDir)], { at: now(), queued: writer.queuedLabels(), alarms: monitorCore.openAlarms(), unmailed: directNotices.unsent() });
      logger.error(
        { queued: writer.queuedLabels(), unmailed: directNotices.unsent(), alarms: monitorCore.openAlarms().map((a) => ({ id: a.id, source: a.source, loopId: a.loopId, condition: a.condition, state: a.state, raisedAt: new Date(a.raisedAt).toISOString() })), file },
        `stopping with ${countOf(writer.pending(), 'write')} the disk never took and ${countOf(directNotices.pending(), 'notice')} not mailed; ${file ? `open alarms saved to ${file}` : 'no folder would take the open alarms either: they are only in this log'}`,
      );
    }
    store.close();
    logger.info({ reason }, 'monitor stopped');
  }

  return { inbox, core: monitorCore, store, writer, web, worker, read, commands, address, stop, mqtt: publisher, runNotifications, dataDir, mailFolder: config.mail.smtp ? null : resolve(dropFolderFor(config)) };
}

export type Monitor = Awaited<ReturnType<typeof startMonitor>>;

/**
 * Watches the database and its lock file by identity (device and inode): deleted, or replaced by
 * another file, means the open connection writes into a file nobody will open again (issue 16 item 6).
 * The identities are taken once, when the store was opened.
 */
function fileIdentityGuard(paths: readonly string[]): () => StorageFailure | null {
  const identityOf = (path: string) => {
    try {
      const info = statSync(path);
      return `${info.dev}:${info.ino}`;
    } catch {
      return null;
    }
  };
  const expected = paths.map((path) => ({ path, identity: identityOf(path) }));
  return () => {
    for (const { path, identity } of expected) {
      if (identity === null) continue;
      const now = identityOf(path);
      if (now === identity) continue;
      return fileGoneFailure(now === null ? `${path} was deleted (or its folder) while the monitor ran` : `${path} was replaced by another file while the monitor ran`, 'file watch');
    }
    return null;
  };
}

export function splitListen(listen: string): [string, string] {
  const at = listen.lastIndexOf(':');
  const host = listen.slice(0, at).replace(/^\[(.*)\]$/, '$1');
  return [host, listen.slice(at + 1)];
}
