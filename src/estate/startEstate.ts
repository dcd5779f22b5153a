import { mkdirSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import mqtt, { type MqttClient } from 'mqtt';
import type { Logger } from 'pino';
import { brokerOptions } from '../mqtt/brokerOptions.js';
import type { EventPayload } from '../mqtt/sitePayloads.js';
import { createDropFolderTransport, createSmtpTransport, type MailTransport } from '../notify/mailTransport.js';
import { createMessageIdFactory, messageIdDomain } from '../notify/messageId.js';
import { publicUrlFor } from '../notify/noticeSettings.js';
import { policiesFromConfig } from '../alarms/escalationPolicy.js';
import { createOutboxWorker } from '../notify/outboxWorker.js';
import { openStore, type Store } from '../store/openStore.js';
import { enqueueOutbox } from '../store/outboxRepo.js';
import { initialEstateBook, isReporting, stepEstate, type EstateBook } from './estateBook.js';
import type { EstateConfig } from './estateConfigSchema.js';
import { createEstateCommander } from './estateCommands.js';
import { dueEstateMail, initialEstateWatch, reconcileEstate, type EstateWatch, type EstateWatchContext, type SiteObservation } from './estateWatch.js';
import type { EstateView } from './estatePages.js';
import { buildEstateWebServer } from './estateWebServer.js';

/**
 * The estate board: subscribes to the sites' topics, keeps what arrives in memory (the broker's
 * retained messages rebuild it after a restart), serves the read-only pages, and runs the estate's
 * own alarms (estateWatch.ts: the site's alarm engine, escalation planner and notice mail) over what
 * it sees, mailing its contacts through the same outbox, worker and transports as a site. Its
 * database holds only its users, sessions, tokens and the mail outbox.
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
/** Without `stale_after`, a site never heard from is called not reporting this long after start-up. */
const STARTUP_GRACE_MS = 90_000;

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

  const siteInfo = new Map(config.sites.map((s) => [s.id, { name: s.name ?? s.id, url: s.url ?? null }]));
  let book: EstateBook = initialEstateBook(config.mqtt.prefix, config.sites.map((s) => s.id));
  const recent: Array<{ siteId: string; event: EventPayload }> = [];
  const listeners = new Set<() => void>();
  const staleAfter = config.mqtt.stale_after;

  // The estate's own alarms: the site's alarm engine and notice mail, fed from the estate book.
  const watchContext: EstateWatchContext = {
    alarms: { policies: policiesFromConfig(config), maxShelveMs: Number.MAX_SAFE_INTEGER },
    groupWindowMs: config.mail.group_window,
    startupGraceMs: staleAfter ?? STARTUP_GRACE_MS,
  };
  const mailSettings = {
    siteName: config.estate.name,
    timeZone: config.estate.timezone,
    from: config.mail.from,
    publicUrl: publicUrlFor(config.web),
    contacts: config.contacts,
    newMessageId,
  };
  let watch: EstateWatch = initialEstateWatch(now());
  const observe = (t: number): SiteObservation[] =>
    config.sites.map((s) => {
      const seen = book.sites[s.id]!;
      return {
        siteId: s.id,
        name: siteInfo.get(s.id)!.name,
        reporting: isReporting(seen, t, staleAfter),
        alarms: seen.alarmListSeen ? seen.alarms : null,
        loops: Object.values(seen.loops).map((l) => ({ id: l.id, name: l.name })),
        heard: seen.status !== null,
      };
    });
  /** One look at every site, then the mail that is due goes into the outbox (committed before any send). */
  const reconcile = () => {
    const t = now();
    try {
      watch = reconcileEstate(watch, observe(t), t, watchContext);
      const due = dueEstateMail(watch, t, mailSettings);
      if (due.messages.length > 0) {
        store.transaction(() => {
          for (const message of due.messages) enqueueOutbox(store.db, message, t);
        });
        watch = due.watch;
        void sendDue();
      } else watch = due.watch;
    } catch (err) {
      // The next beat tries again with the same picture; nothing is dropped from the watch.
      logger.error({ err }, `estate: alarm round failed: ${(err as Error).message}`);
    }
    for (const listener of listeners) listener();
  };
  let reconcileQueued = false;
  const reconcileSoon = () => {
    if (reconcileQueued) return;
    reconcileQueued = true;
    setImmediate(() => {
      reconcileQueued = false;
      reconcile();
    });
  };

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
  const commander = createEstateCommander(client, config.mqtt.prefix, config.mqtt.client_id, config.mqtt.command_timeout);
  /** Site id → the API token the estate acts with there, read once from the environment at start. */
  const commandTokens = new Map<string, string>();
  for (const s of config.sites) {
    const token = s.command_token_env ? env[s.command_token_env] : undefined;
    if (token) commandTokens.set(s.id, token);
    else if (s.command_token_env) logger.warn({ siteId: s.id }, `estate: ${s.command_token_env} is not set; ${s.id} can only be acknowledged on its own pages`);
  }
  client.on('message', (topic, payload, packet) => {
    if (commander.onMessage(topic, packet)) return;
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
    }
    if (topic.endsWith('/alarms') || topic.endsWith('/status')) reconcileSoon();
    for (const listener of listeners) listener();
  });

  const check = setInterval(reconcile, CHECK_MS);
  const retry = setInterval(() => void sendDue(), 5000);

  const view = (): EstateView => ({
    estateName: config.estate.name,
    timeZone: config.estate.timezone,
    now: now(),
    staleAfterMs: staleAfter,
    sites: config.sites.map((s) => ({ seen: book.sites[s.id]!, name: s.name ?? s.id, url: s.url ?? null, canAct: commandTokens.has(s.id) })),
  });
  const acknowledge = (siteId: string, alarmId: number, note: string | null) => {
    const token = commandTokens.get(siteId);
    if (!token) return Promise.resolve({ ok: false as const, code: 'PW_ESTATE_NO_TOKEN', message: 'no command token for this site' });
    return commander.acknowledge(siteId, alarmId, note, token);
  };
  const web = buildEstateWebServer({ config, db: store.db, view, recentEvents: () => recent, now, logger, acknowledge });
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
    /** The estate's own alarms (site alarms it escalates, sites not reporting), for tests and the board. */
    watch: () => watch,
    async stop(): Promise<void> {
      clearInterval(check);
      clearInterval(retry);
      commander.close();
      await client.endAsync().catch(() => undefined);
      await web.close().catch(() => undefined);
      store.close();
    },
  };
}

export type Estate = Awaited<ReturnType<typeof startEstate>>;
