import { z } from 'zod';
import { formatDuration, parseDuration, parseDurationExact } from './duration.js';
import { parseMailbox } from './mailbox.js';

/**
 * The whole site configuration as one zod schema. `SiteConfig` (the inferred output type) is what the
 * rest of the code receives; durations arrive as milliseconds, defaults are filled in.
 * Every object is strict: an unknown key is an error, not silently ignored.
 */

const id = z
  .string()
  .regex(/^[a-z0-9][a-z0-9_-]{0,39}$/, 'must be 1–40 of lower-case letters, digits, "-" or "_", starting with a letter or digit');

interface Range {
  /** Smallest value accepted, in milliseconds (inclusive unless `above` is set). */
  min: number;
  max: number;
  /** Refuse `min` itself: the value must be strictly greater. */
  above?: boolean;
}

function rangeProblem(ms: number, range: Range, show: (ms: number) => string): string | undefined {
  if (range.above ? ms <= range.min : ms < range.min) return `must be ${range.above ? 'longer than' : 'at least'} ${show(range.min)}, not ${show(ms)}`;
  if (ms > range.max) return `must be at most ${show(range.max)}, not ${show(ms)}`;
  return undefined;
}

const showMs = (ms: number) => `${Number(ms.toPrecision(6))} ms`;

/**
 * A duration: `90s`, `20m`, `2h`, `1d`, `5y`, or a bare number of milliseconds. Whole milliseconds.
 * Every duration has a range: zero or absurd values (a `silence: 0` that flaps, an `ack_link_ttl: 1e16`
 * past the end of JavaScript dates) are refused when the file is read, not found by the running monitor.
 */
export function durationSchema(range: Range) {
  return z
    .union([z.string(), z.number()], { error: 'must be a duration such as 90s, 20m or 2h (or a number of milliseconds)' })
    .transform((value, ctx) => {
      const ms = typeof value === 'number' ? value : parseDuration(value);
      if (ms === undefined || !Number.isFinite(ms)) {
        ctx.addIssue({ code: 'custom', message: `${typeof value === 'string' ? `"${value}"` : String(value)} is not a duration (write e.g. 90s, 20m, 2h)` });
        return z.NEVER;
      }
      const problem = rangeProblem(ms, range, formatDuration);
      if (problem) {
        ctx.addIssue({ code: 'custom', message: problem });
        return z.NEVER;
      }
      return ms;
    });
}

/**
 * A `*_ms` key: a number of milliseconds (fractions allowed, `0.2`), or the same written as a
 * duration (`2s`, `0.2ms`), so `trip_ms: 2s` means what it says.
 */
export function millisecondsSchema(range: Range) {
  return z
    .union([z.string(), z.number()], { error: 'must be a number of milliseconds, e.g. 2000 (or a duration such as 2s)' })
    .transform((value, ctx) => {
      const ms = typeof value === 'number' ? value : parseDurationExact(value);
      if (ms === undefined || !Number.isFinite(ms)) {
        ctx.addIssue({ code: 'custom', message: `${typeof value === 'string' ? `"${value}"` : String(value)} is not a number of milliseconds (write e.g. 2000, or 2s)` });
        return z.NEVER;
      }
      const problem = rangeProblem(ms, range, showMs);
      if (problem) {
        ctx.addIssue({ code: 'custom', message: problem });
        return z.NEVER;
      }
      return ms;
    });
}

/** A whole number in a range, with one plain reason for every way it can be wrong. */
export function wholeNumber(min: number, max: number) {
  const reason = `must be a whole number from ${min} to ${max}`;
  return z.number({ error: reason }).int({ error: reason }).min(min, { error: reason }).max(max, { error: reason });
}

const SECOND = 1000;
const MINUTE = 60 * SECOND;
const HOUR = 60 * MINUTE;
const DAY = 24 * HOUR;
const YEAR = 365 * DAY;

/** Any non-negative duration up to a year: the scenario file's times. */
export const duration = durationSchema({ min: 0, max: YEAR });

const localTime = z.string().regex(/^([01]\d|2[0-3]):[0-5]\d$/, 'must be a local time as HH:MM (24-hour)');

const timeZone = z.string().refine((tz) => {
  try {
    new Intl.DateTimeFormat('en', { timeZone: tz });
    return true;
  } catch {
    return false;
  }
}, 'is not an IANA time zone name (e.g. Europe/London)');

const HOST_PORT = /^(\[[0-9a-fA-F:]+\]|[A-Za-z0-9.-]+):(\d{1,5})$/;

/** The port of a HOST:PORT text, or undefined when it is not one. */
function portOf(text: string): number | undefined {
  const match = HOST_PORT.exec(text);
  return match ? Number(match[2]) : undefined;
}

/** Per-loop classification settings; each has the default the protocol notes give. */
export const loopTimingSchema = z.strictObject({
  period_ms: millisecondsSchema({ min: 10, max: 10 * MINUTE }).default(500),
  pulse_min_ms: millisecondsSchema({ min: 0, above: true, max: 1000 }).default(0.2),
  pulse_max_ms: millisecondsSchema({ min: 0, above: true, max: 10_000 }).default(20),
  short_ms: millisecondsSchema({ min: 1, max: HOUR }).default(200),
  open_ms: millisecondsSchema({ min: 1, max: HOUR }).default(200),
  /** No valid pulse for this long (in band N) means tripped. Default 3 periods. */
  trip_ms: millisecondsSchema({ min: 1, max: DAY }).optional(),
  healthy_pulses: wholeNumber(1, 20).default(3),
  interval_min_ratio: z.number().positive().max(1).default(0.5),
  interval_max_ratio: z.number().min(1).max(10).default(1.5),
  intermittent_count: wholeNumber(2, 1000).default(3),
  intermittent_window: durationSchema({ min: SECOND, max: 7 * DAY }).default(600_000),
});

/** tcp://HOST:PORT for a serial-to-network box; the port must be one a socket can have. */
function decoderPortProblem(port: string): string | undefined {
  if (port.startsWith('tcp://')) {
    const number = portOf(port.slice('tcp://'.length));
    if (number === undefined) return 'must be tcp://HOST:PORT, e.g. tcp://192.168.1.40:4001';
    if (number < 1 || number > 65535) return `the TCP port must be from 1 to 65535, not ${number}`;
    return undefined;
  }
  if (port.startsWith('/') || port.startsWith('sim:') || /^COM\d+$/.test(port)) return undefined;
  return 'must be a device path (/dev/…), tcp://host:port, or sim:FILE';
}

const decoderSchema = z.strictObject({
  id,
  name: z.string().min(1).max(80).optional(),
  port: z
    .string()
    .min(1)
    .superRefine((port, ctx) => {
      const problem = decoderPortProblem(port);
      if (problem) ctx.addIssue({ code: 'custom', message: problem });
    }),
  baud: wholeNumber(300, 4_000_000).default(250000),
  inputs: wholeNumber(1, 64).optional(),
  /**
   * Host-clock silence after which the decoder (and its loops) count as offline. The protocol sends
   * a TICK at least every 250 ms, so 1 s is four missed TICKs: shorter would flap on ordinary jitter.
   */
  silence: durationSchema({ min: SECOND, max: 10 * MINUTE }).default(2000),
});

const loopSchema = loopTimingSchema.extend({
  id,
  name: z.string().min(1).max(80),
  decoder: id,
  input: wholeNumber(1, 64),
  location: z.string().max(120).optional(),
  /** A latched alarm stays until acknowledged even after its condition clears. */
  latch_alarms: z.boolean().default(true),
  latch_trouble: z.boolean().default(false),
  escalation: id.optional(),
  trouble_escalation: id.optional(),
});

const contactSchema = z.strictObject({
  id,
  name: z.string().min(1).max(80),
  email: z.email('must be an email address such as office@example.org'),
  /** Web user name this contact signs in as; a mail reply may shelve only when that user is an operator or admin. */
  user: z.string().min(1).max(80).optional(),
});

const stepSchema = z.strictObject({
  after: durationSchema({ min: 0, max: 30 * DAY }),
  notify: z.array(id).min(1),
});

const policySchema = z.strictObject({
  steps: z.array(stepSchema).min(1),
  repeat_every: durationSchema({ min: SECOND, max: 7 * DAY }).optional(),
  max_repeats: wholeNumber(0, 1000).default(10),
});

const smtpSchema = z.strictObject({
  host: z.string().min(1),
  port: wholeNumber(1, 65535).default(587),
  /** true: TLS from the first byte (port 465); false: STARTTLS when offered. */
  secure: z.boolean().default(false),
  user: z.string().optional(),
  pass: z.string().optional(),
  /** Name of an environment variable holding the password; keeps the secret out of the file. */
  pass_env: z.string().regex(/^[A-Z_][A-Z0-9_]*$/, 'must be an environment variable name (capitals, digits and _, e.g. PAIRWATCH_SMTP_PASS)').optional(),
  require_tls: z.boolean().default(false),
  timeout: durationSchema({ min: SECOND, max: 10 * MINUTE }).default(20_000),
});

/** mail.from goes into every From: header (RFC 5322 §3.6.2): one mailbox, checked by its §3.4 grammar. */
const mailbox = z.string().superRefine((text, ctx) => {
  const parsed = parseMailbox(text);
  if (!parsed.ok) ctx.addIssue({ code: 'custom', message: parsed.reason });
});

/** The mailbox that receives replies to alarm mail; its presence turns on acknowledging by reply. */
const imapSchema = z.strictObject({
  host: z.string().min(1),
  /** 993 is IMAP over TLS from the first byte (RFC 8314 §3.3). */
  port: wholeNumber(1, 65535).default(993),
  secure: z.boolean().default(true),
  user: z.string().min(1),
  pass_env: z.string().regex(/^[A-Z_][A-Z0-9_]*$/, 'must be an environment variable name (capitals, digits and _, e.g. PAIRWATCH_IMAP_PASS)'),
  folder: z.string().min(1).default('INBOX'),
  /** Handled replies are moved here; without it they are only marked as read. */
  done_folder: z.string().min(1).optional(),
  /**
   * Put the reply token into the Reply-To address as well (alarms+TOKEN@domain, RFC 5233 subaddress).
   * Off by default: only for a mailbox provider that delivers +tag addresses to the same mailbox.
   */
  reply_tag: z.boolean().default(false),
  /** Refuse replies whose DKIM signature does not verify (RFC 6376). */
  require_dkim: z.boolean().default(false),
});

const mailSchema = z
  .strictObject({
    from: mailbox.default('pairwatch <pairwatch@localhost>'),
    smtp: smtpSchema.optional(),
    /** Where mail goes as .eml files when there is no SMTP server (the demo). Default: <data>/outbox-mail */
    drop_folder: z.string().min(1).optional(),
    group_window: durationSchema({ min: 0, max: 10 * MINUTE }).default(10_000),
    retry_first: durationSchema({ min: SECOND, max: HOUR }).default(15_000),
    retry_max: durationSchema({ min: SECOND, max: DAY }).default(900_000),
    /** Consecutive failed attempts before "mail failing" is raised. */
    failing_after: wholeNumber(1, 100).default(3),
    imap: imapSchema.optional(),
  })
  .prefault({ from: 'pairwatch <pairwatch@localhost>' });

const reportSchema = z
  .strictObject({
    at: localTime.default('07:00'),
    notify: z.array(id).default([]),
  })
  .prefault({});

const retentionSchema = z
  .strictObject({
    edges: durationSchema({ min: 10 * MINUTE, max: YEAR }).default(6 * HOUR),
    minute_quality: durationSchema({ min: HOUR, max: 10 * YEAR }).default(90 * DAY),
    hourly_quality: durationSchema({ min: DAY, max: 20 * YEAR }).default(5 * YEAR),
    backups_kept: wholeNumber(0, 365).default(7),
  })
  .prefault({});

/** SQLite's own default page cache (about 2 MB); better-sqlite3's build would otherwise use 16 MB. */
export const DEFAULT_CACHE_KIB = 2048;

const storageSchema = z.strictObject({
  path: z.string().min(1),
  retention: retentionSchema,
  /** The database's page cache in KiB (PRAGMA cache_size = -N): memory held for speed, per connection. */
  cache_kib: z
    .number({ error: 'must be a whole number of KiB, e.g. 2048' })
    .min(256, { error: 'must be at least 256 (KiB)' })
    .max(1_048_576, { error: 'must be at most 1048576 (KiB, 1 GiB)' })
    // A refinement rather than .int(): its message is ours whatever the config error formatter does.
    .refine(Number.isInteger, { error: 'must be a whole number of KiB, e.g. 2048' })
    .default(DEFAULT_CACHE_KIB),
});

const webSchema = z
  .strictObject({
    /** Port 0 asks the system for any free port (tests); otherwise 1–65535. */
    listen: z
      .string()
      .superRefine((text, ctx) => {
        const port = portOf(text);
        if (port === undefined) ctx.addIssue({ code: 'custom', message: 'must be HOST:PORT, e.g. 127.0.0.1:8080' });
        else if (port > 65535) ctx.addIssue({ code: 'custom', message: `the port must be from 1 to 65535, not ${port}` });
      })
      .default('127.0.0.1:8080'),
    /** The address people reach the server at, for links in mail. Default http://<listen>. */
    public_url: z.url({ protocol: /^https?$/, error: 'must be a full http:// or https:// URL such as https://monitor.example.org' }).optional(),
    tls: z.strictObject({ cert: z.string().min(1), key: z.string().min(1) }).optional(),
    session_ttl: durationSchema({ min: 5 * MINUTE, max: YEAR }).default(7 * DAY),
    ack_link_ttl: durationSchema({ min: 5 * MINUTE, max: 90 * DAY }).default(7 * DAY),
    max_shelve: durationSchema({ min: MINUTE, max: 30 * DAY }).default(24 * HOUR),
    login_attempts_per_minute: wholeNumber(1, 1000).default(5),
    /** A session not used for this long ends (besides session_ttl, which counts from sign-in). */
    session_idle: durationSchema({ min: MINUTE, max: YEAR }).default(12 * HOUR),
    /** Host names the server answers to besides those of listen and public_url (DNS-rebinding guard). */
    allowed_hosts: z.array(z.string().regex(/^[A-Za-z0-9.-]+$|^\[[0-9a-fA-F:]+\]$/, 'must be a host name or [IPv6] address, without a port')).default([]),
    /** When set, /metrics needs "Authorization: Bearer <this>"; unset, /metrics answers loopback clients only. */
    metrics_token: z.string().min(16, 'must be at least 16 characters').optional(),
    /** Longest time a client may take to send one whole request (headers and body). */
    request_timeout: durationSchema({ min: 1000, max: HOUR }).default(30_000),
    /** Most simultaneous web connections (further ones are closed at once); also kept below the open-file limit. */
    max_connections: wholeNumber(1, 100_000).default(200),
  })
  .prefault({});

// --- mqtt (issue 12: publishing to an MQTT 5 broker) -------------------------------------------
const mqttSchema = z.strictObject({
  url: z.string().regex(/^mqtts?:\/\/[^\s/]+$/, 'must be mqtt://HOST:PORT or mqtts://HOST:PORT (TLS)'),
  /** Default: pairwatch-<site_id>. Must be unique on the broker. */
  client_id: z.string().min(1).max(128).optional(),
  username: z.string().min(1).optional(),
  /** Name of an environment variable holding the broker password. */
  pass_env: z.string().regex(/^[A-Z_][A-Z0-9_]*$/, 'must be an environment variable name').optional(),
  /** CA certificate file for mqtts:// to a broker with a private CA. */
  ca: z.string().min(1).optional(),
  prefix: z.string().regex(/^[A-Za-z0-9_-]+(\/[A-Za-z0-9_-]+)*$/, 'must be topic levels of letters, digits, "-" or "_" joined by "/"').default('pairwatch'),
  site_id: id,
  /** MQTT keep-alive; the broker declares the site offline within 1.5 times this after an unclean death. */
  keepalive: duration.refine((ms) => ms >= 1000 && ms <= 65_535_000, 'must be between 1s and 18h').default(30_000),
  /** How often the heartbeat goes out. Default: the keep-alive. */
  heartbeat: duration.refine((ms) => ms >= 1000, 'must be at least 1s').optional(),
  /** MQTT 5 message expiry of alarm events held by the broker for an absent subscriber. */
  event_expiry: duration.refine((ms) => ms >= 1000, 'must be at least 1s').default(86_400_000),
  /** MQTT 5 session expiry: how long the broker keeps this site's session (command subscription) while it is away. */
  session_expiry: duration.default(3_600_000),
  /** Not connected for this long raises the system trouble "broker unreachable". */
  unreachable_after: duration.default(60_000),
  /** Accept acknowledge and shelve over the command topic (each command carries an API token). */
  accept_commands: z.boolean().default(false),
});
// --- end mqtt ------------------------------------------------------------------------------------

export const siteConfigSchema = z.strictObject({
  site: z.strictObject({
    name: z.string().min(1).max(80),
    timezone: timeZone.default('UTC'),
  }),
  decoders: z.array(decoderSchema).min(1, 'needs at least one decoder'),
  loops: z.array(loopSchema).min(1, 'needs at least one loop'),
  contacts: z.array(contactSchema).default([]),
  escalation: z.record(id, policySchema).default({}),
  mail: mailSchema,
  report: reportSchema,
  storage: storageSchema,
  web: webSchema,
  mqtt: mqttSchema.optional(),
});

/** The sections, for checking each entry of a file whose whole shape did not pass. */
export const sectionSchemas = { decoder: decoderSchema, loop: loopSchema, contact: contactSchema, policy: policySchema, report: reportSchema, mail: mailSchema } as const;

export type SiteConfigInput = z.input<typeof siteConfigSchema>;
export type SiteConfig = z.output<typeof siteConfigSchema>;
export type DecoderConfig = SiteConfig['decoders'][number];
export type LoopConfig = SiteConfig['loops'][number];
export type ContactConfig = SiteConfig['contacts'][number];
export type EscalationPolicyConfig = SiteConfig['escalation'][string];
export type MailConfig = SiteConfig['mail'];
export type ImapConfig = NonNullable<MailConfig['imap']>;
export type WebConfig = SiteConfig['web'];
export type MqttConfig = NonNullable<SiteConfig['mqtt']>;
