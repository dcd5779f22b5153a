import type { Database } from 'better-sqlite3';
import mqtt, { type IPublishPacket, type MqttClient } from 'mqtt';
import type { Logger } from 'pino';
import type { MqttConfig } from '../config/schema.js';
import type { WebCommands, WebReadModel } from '../web/webPorts.js';
import { brokerOptions } from './brokerOptions.js';
import { lastAlarmEventNo, markAlarmEventsSent, pendingAlarmEvents, pruneSentAlarmEvents } from './mqttOutbox.js';
import { runCommand, TOKEN_PROPERTY } from './siteCommands.js';
import {
  alarmPayload,
  decoderPayload,
  loopPayload,
  statusPayload,
  summaryPayload,
} from './sitePayloads.js';
import { siteTopics } from './siteTopics.js';

/**
 * One site's link to the MQTT 5 broker: liveness with a Last Will, heartbeat, retained states, and
 * the alarm events drained from the durable outbox in event-number order. While the broker is away
 * nothing is queued in memory: events wait in SQLite, retained state is republished on reconnect,
 * and after `unreachable_after` the daemon is told to raise "broker unreachable".
 */
export interface SitePublisherOptions {
  config: MqttConfig;
  site: { name: string; timezone: string; url: string | null };
  db: Database;
  read: Pick<WebReadModel, 'loops' | 'loop' | 'decoders' | 'alarms'>;
  commands: Pick<WebCommands, 'acknowledge' | 'shelve'>;
  now: () => number;
  logger: Logger;
  version: string | null;
  startedAt: number;
  env: NodeJS.ProcessEnv;
  /** "broker unreachable" is already raised (after a restart), so the first connection clears it. */
  initiallyUnreachable: boolean;
  onUnreachable(reason: string): void;
  onReachable(): void;
}

const BATCH = 200;
/** Coalesces bursts of changes (a storm) into one round of retained updates. */
const STATE_DEBOUNCE_MS = 100;
const QUALITY_REFRESH_MS = 60_000;
const SENT_KEEP_MS = 7 * 86_400_000;

export function startSitePublisher(options: SitePublisherOptions) {
  const { config, db, read, logger, now } = options;
  const topics = siteTopics(config.prefix, config.site_id);
  const heartbeatMs = config.heartbeat ?? config.keepalive;
  const clientId = config.client_id ?? `pairwatch-${config.site_id}`;
  const will = statusPayload(false, options.startedAt, options.version, options.startedAt, 'connection lost');
  const client: MqttClient = mqtt.connect(config.url, {
    ...brokerOptions(
      { url: config.url, clientId, username: config.username, passEnv: config.pass_env, ca: config.ca, keepaliveMs: config.keepalive, sessionExpiryMs: config.session_expiry },
      options.env,
    ),
    will: { topic: topics.status, payload: Buffer.from(JSON.stringify(will)), qos: 1, retain: true, properties: { willDelayInterval: 0 } },
  });

  let stopped = false;
  let unreachable = options.initiallyUnreachable;
  let downSince: number | null = now();
  let lastError = 'not connected yet';
  let generation = 0;
  let draining = false;
  let drainAgain = false;
  /** Last retained payload sent per topic this connection (without its `at`), so unchanged state is not resent. */
  const sentRetained = new Map<string, string>();

  const publish = (topic: string, body: object, opts: mqtt.IClientPublishOptions) =>
    client.publishAsync(topic, JSON.stringify(body), opts).catch((err: unknown) => {
      if (!stopped) logger.debug({ err, topic }, 'publish not completed (connection lost)');
      return undefined;
    });

  const publishRetained = (topic: string, body: object, force: boolean) => {
    const key = JSON.stringify({ ...body, at: undefined });
    if (!force && sentRetained.get(topic) === key) return;
    sentRetained.set(topic, key);
    void publish(topic, body, { qos: 1, retain: true });
  };

  function publishState(force: boolean): void {
    if (!client.connected) return;
    const t = now();
    const loops = read.loops().map((l) => read.loop(l.id)).filter((l): l is NonNullable<typeof l> => l !== null);
    const active = read.alarms('active');
    publishRetained(topics.summary, summaryPayload(options.site, loops, active, t), force);
    for (const loop of loops) publishRetained(topics.loop(loop.id), loopPayload(loop), force);
    for (const decoder of read.decoders()) publishRetained(topics.decoder(decoder.id), decoderPayload(decoder), force);
    publishRetained(topics.alarms, { at: new Date(t).toISOString(), lastEventNo: lastAlarmEventNo(db), alarms: active.map(alarmPayload) }, force);
  }

  /** Sends queued events in order; stops at a lost connection and starts over from the outbox on the next one. */
  async function drain(): Promise<void> {
    if (draining) {
      drainAgain = true;
      return;
    }
    draining = true;
    const mine = generation;
    try {
      do {
        drainAgain = false;
        while (client.connected && mine === generation && !stopped) {
          const events = pendingAlarmEvents(db, BATCH);
          if (events.length === 0) break;
          const expiry = Math.max(1, Math.round(config.event_expiry / 1000));
          const acks = events.map((event) =>
            client.publishAsync(topics.events, JSON.stringify(event), { qos: 1, retain: false, properties: { messageExpiryInterval: expiry, contentType: 'application/json' } }).then(() => event.eventNo),
          );
          // Acknowledged in order on one connection: everything up to the last PUBACK has arrived.
          let onClose: () => void = () => undefined;
          const lost = new Promise<'lost'>((resolve) => {
            onClose = () => resolve('lost');
            client.once('close', onClose);
          });
          // A refused publish (an ACL that does not let this site write its events topic) lands here too: logged, retried later.
          const outcome = await Promise.race([Promise.all(acks), lost]).catch((err: unknown) => {
            logger.error({ err }, `mqtt: the broker refused an event: ${(err as Error).message}`);
            return 'lost' as const;
          });
          client.removeListener('close', onClose);
          if (outcome === 'lost') break;
          markAlarmEventsSent(db, events[events.length - 1]!.eventNo, now());
        }
      } while (drainAgain && client.connected && mine === generation && !stopped);
    } catch (err) {
      logger.error({ err }, `mqtt: sending queued events failed: ${(err as Error).message}`);
    } finally {
      draining = false;
    }
  }

  client.on('connect', () => {
    generation += 1;
    downSince = null;
    sentRetained.clear();
    logger.info({ url: config.url, clientId }, `mqtt: connected to ${config.url}`);
    if (unreachable) {
      unreachable = false;
      options.onReachable();
    }
    void publish(topics.status, statusPayload(true, now(), options.version, options.startedAt, null), { qos: 1, retain: true });
    publishState(true);
    heartbeat();
    if (config.accept_commands) {
      client.subscribeAsync(topics.commands, { qos: 1 }).catch((err: unknown) => logger.warn({ err }, `mqtt: cannot subscribe to ${topics.commands}`));
    }
    void drain();
  });
  client.on('close', () => {
    generation += 1;
    if (downSince === null && !stopped) {
      downSince = now();
      logger.warn({ url: config.url }, `mqtt: connection to ${config.url} lost; events wait in the outbox`);
    }
  });
  client.on('error', (err) => {
    lastError = err.message;
    logger.debug({ err }, `mqtt: ${err.message}`);
  });
  client.on('message', (topic, payload, packet: IPublishPacket) => {
    if (topic !== topics.commands || !config.accept_commands) return;
    const props = packet.properties ?? {};
    const userToken = props.userProperties?.[TOKEN_PROPERTY];
    const token = Array.isArray(userToken) ? userToken[0] : userToken;
    const reply = runCommand(db, options.commands, payload, token, now());
    logger.info({ action: reply.action, alarmId: reply.alarmId, ok: reply.ok, code: reply.code }, `mqtt command ${reply.action ?? '?'}: ${reply.ok ? 'done' : reply.message}`);
    if (props.responseTopic) {
      void publish(props.responseTopic, reply, { qos: 1, retain: false, properties: { ...(props.correlationData && { correlationData: props.correlationData }), contentType: 'application/json' } });
    }
  });

  function heartbeat(): void {
    if (!client.connected) return;
    const t = now();
    void publish(
      topics.heartbeat,
      { at: new Date(t).toISOString(), version: options.version, uptimeS: Math.round((t - options.startedAt) / 100) / 10, intervalS: heartbeatMs / 1000, lastEventNo: lastAlarmEventNo(db) },
      { qos: 0, retain: false },
    );
  }

  const timers: NodeJS.Timeout[] = [];
  timers.push(setInterval(heartbeat, heartbeatMs));
  timers.push(setInterval(() => publishState(true), QUALITY_REFRESH_MS));
  timers.push(
    setInterval(() => {
      if (downSince !== null && !unreachable && now() - downSince >= config.unreachable_after) {
        unreachable = true;
        options.onUnreachable(`no connection to ${config.url} for ${Math.round((now() - downSince) / 1000)} s: ${lastError}`);
      }
    }, Math.min(1000, config.unreachable_after)),
  );
  timers.push(setInterval(() => pruneSentAlarmEvents(db, now() - SENT_KEEP_MS), 3_600_000));

  let stateTimer: NodeJS.Timeout | null = null;
  return {
    /** Something on the site changed: retained state follows shortly (bursts are coalesced). */
    changed(): void {
      if (stateTimer || stopped) return;
      stateTimer = setTimeout(() => {
        stateTimer = null;
        publishState(false);
      }, STATE_DEBOUNCE_MS);
    },
    /** New rows in the outbox (committed): send them now if the broker is there. */
    eventsQueued(): void {
      if (!stopped) void drain();
    },
    isConnected: () => client.connected,
    /** Says "offline, stopped" (retained) and disconnects cleanly, so the Last Will is not sent. */
    async stop(): Promise<void> {
      if (stopped) return;
      for (const timer of timers) clearInterval(timer);
      if (stateTimer) clearTimeout(stateTimer);
      if (client.connected) {
        await Promise.race([
          client.publishAsync(topics.status, JSON.stringify(statusPayload(false, now(), options.version, options.startedAt, 'stopped')), { qos: 1, retain: true }),
          new Promise((r) => setTimeout(r, 2000)),
        ]).catch(() => undefined);
      }
      stopped = true;
      await client.endAsync(!client.connected).catch(() => undefined);
    },
  };
}

export type SitePublisher = ReturnType<typeof startSitePublisher>;
