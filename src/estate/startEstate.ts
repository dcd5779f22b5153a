import { mkdirSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import mqtt, { type MqttClient } from 'mqtt';
import type { Logger } from 'pino';
import { brokerOptions } from '../mqtt/brokerOptions.js';
import type { EventPayload } from '../mqtt/sitePayloads.js';
import { createDropFolderTransport, createSmtpTransport, type MailTransport } from '../notify/mailTransport.js';
import { createMessageIdFactory, messageIdDomain } from '../notify/messageId.js';
import { mailbox } from '../notify/noticeSettings.js';
import { createOutboxWorker } from '../notify/outboxWorker.js';
import { openStore, type Store } from '../store/openStore.js';
import { enqueueOutbox } from '../store/outboxRepo.js';
import { initialEstateBook, isReporting, stepEstate, type EstateBook } from './estateBook.js';
import type { EstateConfig } from './estateConfigSchema.js';
import { composeAlarmDigestMail, composeReportingMail, composeSiteAlarmMail } from './estateMail.js';
import type { EstateView } from './estatePages.js';
import { buildEstateWebServer } from './estateWebServer.js';

/**
 * The estate board: subscribes to the sites' topics, keeps what arrives in memory (the broker's
 * retained messages rebuild it after a restart), serves the read-only pages, and mails its own
 * contacts through the same outbox, worker and transports as a site when a site stops reporting or
 * raises an alarm. Its database holds only its users, sessions, tokens and the mail outbox.
 */
export interface StartEstateOptions {
  config: EstateConfig;
  logger: Logger;
  env?: NodeJS.ProcessEnv;
  now?: () => number;
  listen?: boolean;
  transport?: MailTransport;
}

const CHECK_MS = 250;
const RECENT_EVENTS = 200;

export async function startEstate(options: StartEstateOptions) {
  const { config, logger } = options;
  const now = options.now ?? Date.now;
  const env = options.env ?? process.env;
  const dbPath = resolve(config.storage.path);
  mkdirSync(dirname(dbPath), { recursive: true });
  const store: Store = openStore({ path: dbPath });

  let transport: MailTransport;
  if (options.transport) transport = options.transport;
  else if (config.mail.smtp) transport = createSmtpTransport(config.mail.smtp, env);
  else transport = createDropFolderTransport(resolve(config.mail.drop_folder ?? join(dirname(dbPath), 'estate-mail')));
  const newMessageId = createMessageIdFactory(messageIdDomain(config.mail.from));
  // Who hears: the first step of the default policy, else every contact.
  const firstStep = config.escalation.default?.steps[0]?.notify ?? [];
  const to = config.contacts.filter((c) => firstStep.length === 0 || firstStep.includes(c.id)).map((c) => mailbox(c));
  const worker = createOutboxWorker({
    db: store.db,
    transport,
    now,
    failingAfter: config.mail.failing_after,
    retryFirstMs: config.mail.retry_first,
    retryMaxMs: config.mail.retry_max,
    onFailing: (reason) => logger.error({ reason }, `estate mail failing: ${reason}`),
    onRecovered: () => logger.info('estate mail flowing again'),
    logger,
  });
  /** Sends until nothing is due: rows queued while a batch was going out are not left for the retry timer. */
  const sendDue = async (): Promise<void> => {
    try {
      for (;;) {
        const result = await worker.runOnce();
        const next = worker.nextDueAt();
        if (result.sent + result.failed === 0 || next === null || next > now()) return;
      }
    } catch (err) {
      logger.error({ err }, `estate mail round failed: ${(err as Error).message}`);
    }
  };
  const mail = (message: Parameters<typeof enqueueOutbox>[1]) => {
    if (to.length === 0) return;
    store.transaction(() => enqueueOutbox(store.db, message, now()));
    void sendDue();
  };

  // Storm control, as on a site: alarms raised within mail.group_window go out as one mail.
  let held: Array<{ siteId: string; event: EventPayload }> = [];
  let heldTimer: NodeJS.Timeout | null = null;
  const flushHeld = () => {
    heldTimer = null;
    const batch = held;
    held = [];
    if (batch.length === 0) return;
    const envelope = { from: config.mail.from, to, messageId: newMessageId() };
    mail(batch.length === 1 ? composeSiteAlarmMail(siteInfo.get(batch[0]!.siteId)!, batch[0]!.event, envelope) : composeAlarmDigestMail(batch.map((b) => ({ site: siteInfo.get(b.siteId)!, event: b.event })), envelope));
  };
  const holdForMail = (siteId: string, event: EventPayload) => {
    held.push({ siteId, event });
    heldTimer ??= setTimeout(flushHeld, config.mail.group_window);
  };

  const siteInfo = new Map(config.sites.map((s) => [s.id, { name: s.name ?? s.id, url: s.url ?? null }]));
  let book: EstateBook = initialEstateBook(config.mqtt.prefix, config.sites.map((s) => s.id));
  const recent: Array<{ siteId: string; event: EventPayload }> = [];
  /** Last reporting verdict per site; a change is mailed (the first verdict only when it is "not reporting"). */
  const reporting = new Map<string, boolean>();
  const listeners = new Set<() => void>();

  const client: MqttClient = mqtt.connect(config.mqtt.url, brokerOptions(
    { url: config.mqtt.url, clientId: config.mqtt.client_id, username: config.mqtt.username, passEnv: config.mqtt.pass_env, ca: config.mqtt.ca, keepaliveMs: config.mqtt.keepalive, sessionExpiryMs: config.mqtt.session_expiry },
    env,
  ));
  client.on('connect', () => {
    logger.info({ url: config.mqtt.url }, `estate: connected to ${config.mqtt.url}`);
    const filters = config.sites.map((s) => `${config.mqtt.prefix}/${s.id}/#`);
    client.subscribeAsync(filters, { qos: 1 }).catch((err: unknown) => logger.error({ err }, `estate: cannot subscribe: ${(err as Error).message}`));
  });
  client.on('error', (err) => logger.warn({ err }, `estate: broker: ${err.message}`));
  client.on('message', (topic, payload) => {
    let body: unknown;
    try {
      body = JSON.parse(payload.toString());
    } catch {
      logger.warn({ topic }, 'estate: a message that is not JSON was ignored');
      return;
    }
    const stepped = stepEstate(book, topic, body);
    book = stepped.book;
    for (const effect of stepped.effects) {
      if (effect.kind === 'gap') {
        logger.warn(effect, `estate: events ${effect.expected}–${effect.got - 1} from ${effect.siteId} never arrived; the retained alarm list is still right`);
        continue;
      }
      recent.push({ siteId: effect.siteId, event: effect.event });
      if (recent.length > RECENT_EVENTS) recent.shift();
      if (effect.event.kind === 'raised' && effect.event.alarm.priority !== 'system') holdForMail(effect.siteId, effect.event);
    }
    for (const listener of listeners) listener();
  });

  const staleAfter = config.mqtt.stale_after;
  const check = setInterval(() => {
    const t = now();
    for (const site of Object.values(book.sites)) {
      const verdict = isReporting(site, t, staleAfter);
      const before = reporting.get(site.siteId);
      if (before === verdict) continue;
      reporting.set(site.siteId, verdict);
      if (before === undefined && verdict) continue;
      logger.info({ siteId: site.siteId, reporting: verdict }, `estate: ${site.siteId} ${verdict ? 'reporting again' : 'not reporting'}`);
      mail(composeReportingMail(siteInfo.get(site.siteId)!, verdict, site.lastSpokeMs, site.status && !site.status.online ? site.status.reason : 'silent', { from: config.mail.from, to, messageId: newMessageId() }));
    }
    for (const listener of listeners) listener();
  }, CHECK_MS);
  const retry = setInterval(() => void sendDue(), 5000);

  const view = (): EstateView => ({
    estateName: config.estate.name,
    timeZone: config.estate.timezone,
    now: now(),
    staleAfterMs: staleAfter,
    sites: config.sites.map((s) => ({ seen: book.sites[s.id]!, name: s.name ?? s.id, url: s.url ?? null })),
  });
  const web = buildEstateWebServer({ config, db: store.db, view, recentEvents: () => recent, now, logger });
  let address: string | null = null;
  if (options.listen !== false) {
    const at = config.web.listen.lastIndexOf(':');
    try {
      address = await web.listen({ host: config.web.listen.slice(0, at).replace(/^\[(.*)\]$/, '$1'), port: Number(config.web.listen.slice(at + 1)) });
    } catch (err) {
      clearInterval(check);
      clearInterval(retry);
      await client.endAsync(true).catch(() => undefined);
      store.close();
      throw Object.assign(new Error(`web.listen: cannot listen on ${config.web.listen}: ${(err as Error).message}`), { code: 'PW_WEB_LISTEN_FAILED' });
    }
    logger.info({ address }, `estate board listening on ${address}`);
  }

  return {
    web,
    store,
    address,
    view,
    book: () => book,
    /** Told after every message and every check (tests wait on it rather than on the clock). */
    onChange(listener: () => void): () => void {
      listeners.add(listener);
      return () => listeners.delete(listener);
    },
    runMail: () => worker.runOnce(),
    async stop(): Promise<void> {
      if (heldTimer) clearTimeout(heldTimer);
      flushHeld();
      clearInterval(check);
      clearInterval(retry);
      await client.endAsync().catch(() => undefined);
      await web.close().catch(() => undefined);
      store.close();
    },
  };
}

export type Estate = Awaited<ReturnType<typeof startEstate>>;
