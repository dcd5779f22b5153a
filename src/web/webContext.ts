import type BetterSqlite3 from 'better-sqlite3';
import type { SiteConfig } from '../config/schema.js';
import type { AckLinkPort } from './ackLink/ackLinkPort.js';
import type { ScryptCost } from './auth/passwordHash.js';
import type { WebCommands, WebLiveFeed, WebReadModel } from './webPorts.js';

/** The little logging surface the web layer uses; a pino logger fits it. */
export interface WebLogger {
  info(obj: object, msg?: string): void;
  warn(obj: object, msg?: string): void;
  error(obj: object, msg?: string): void;
}

/** Everything a route needs, built once by buildWebServer and handed to each route module. */
export interface WebContext {
  config: SiteConfig;
  db: BetterSqlite3.Database;
  read: WebReadModel;
  commands: WebCommands;
  live: WebLiveFeed;
  ackLinks: AckLinkPort;
  now: () => number;
  /** A monotonic clock in ms (performance.now()): paces the auth lookup's questions to the database. */
  monotonicNow: () => number;
  log: WebLogger;
  /** Served over TLS by this process (cookies Secure, HSTS). */
  tls: boolean;
  /** Cookies marked Secure: under TLS here, or behind an https public_url. */
  secureCookies: boolean;
  scryptCost: ScryptCost;
  /** Origins a browser form may come from besides the request's own. */
  extraOrigins: readonly string[];
}
