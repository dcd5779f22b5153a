import { readFileSync } from 'node:fs';
import type { IClientOptions } from 'mqtt';

/** What both a site and the estate need to reach the broker. Durations in ms. */
export interface BrokerSettings {
  url: string;
  clientId: string;
  username?: string | undefined;
  passEnv?: string | undefined;
  ca?: string | undefined;
  keepaliveMs: number;
  sessionExpiryMs: number;
}

/** Retry every few seconds for ever: a broker outage is waited out, never given up on. */
const RECONNECT_MS = 2000;

/** MQTT.js options for an MQTT 5 session that survives short absences (clean start off, session expiry set). */
export function brokerOptions(settings: BrokerSettings, env: NodeJS.ProcessEnv): IClientOptions {
  const password = settings.passEnv ? env[settings.passEnv] : undefined;
  if (settings.passEnv && password === undefined) {
    throw Object.assign(new Error(`mqtt.pass_env: the environment variable ${settings.passEnv} is not set`), { code: 'PW_MQTT_NO_PASSWORD' });
  }
  let ca: Buffer | undefined;
  if (settings.ca) {
    try {
      ca = readFileSync(settings.ca);
    } catch (err) {
      throw Object.assign(new Error(`mqtt.ca: cannot read ${settings.ca}: ${(err as NodeJS.ErrnoException).code ?? (err as Error).message}`), { code: 'PW_MQTT_CA_UNREADABLE' });
    }
  }
  return {
    protocolVersion: 5,
    clientId: settings.clientId,
    ...(settings.username !== undefined && { username: settings.username }),
    ...(password !== undefined && { password }),
    ...(ca !== undefined && { ca }),
    keepalive: Math.max(1, Math.round(settings.keepaliveMs / 1000)),
    clean: false,
    properties: { sessionExpiryInterval: Math.round(settings.sessionExpiryMs / 1000) },
    reconnectPeriod: RECONNECT_MS,
    connectTimeout: 10_000,
    // Nothing is queued inside the library while offline: the outbox holds events, state is republished.
    queueQoSZero: false,
    resubscribe: true,
  };
}
