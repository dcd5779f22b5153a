import { z } from 'zod';
import { parseDuration } from './duration.js';

/**
 * The whole site configuration as one zod schema. `SiteConfig` (the inferred output type) is what the
 * rest of the code receives; durations arrive as milliseconds, defaults are filled in.
 * Every object is strict: an unknown key is an error, not silently ignored.
 */

const id = z
  .string()
  .regex(/^[a-z0-9][a-z0-9_-]{0,39}$/, 'must be 1–40 of lower-case letters, digits, "-" or "_", starting with a letter or digit');

export const duration = z
  .union([z.string(), z.number()])
  .transform((value, ctx) => {
    if (typeof value === 'number') return value; // plain numbers are milliseconds
    const ms = parseDuration(value);
    if (ms === undefined) {
      ctx.addIssue({ code: 'custom', message: `"${value}" is not a duration (write e.g. 90s, 20m, 2h)` });
      return z.NEVER;
    }
    return ms;
  });

const localTime = z.string().regex(/^([01]\d|2[0-3]):[0-5]\d$/, 'must be a local time as HH:MM (24-hour)');

const timeZone = z.string().refine((tz) => {
  try {
    new Intl.DateTimeFormat('en', { timeZone: tz });
    return true;
  } catch {
    return false;
  }
}, 'is not an IANA time zone name (e.g. Europe/London)');

/** Per-loop classification settings; each has the default the protocol notes give. */
export const loopTimingSchema = z.strictObject({
  period_ms: z.number().positive().default(500),
  pulse_min_ms: z.number().positive().default(0.2),
  pulse_max_ms: z.number().positive().default(20),
  short_ms: z.number().positive().default(200),
  open_ms: z.number().positive().default(200),
  /** No valid pulse for this long (in band N) means tripped. Default 3 periods. */
  trip_ms: z.number().positive().optional(),
  healthy_pulses: z.number().int().min(1).max(20).default(3),
  interval_min_ratio: z.number().positive().default(0.5),
  interval_max_ratio: z.number().positive().default(1.5),
  intermittent_count: z.number().int().min(2).default(3),
  intermittent_window: duration.default(600_000),
});

const decoderSchema = z.strictObject({
  id,
  name: z.string().min(1).max(80).optional(),
  port: z
    .string()
    .min(1)
    .refine(
      (p) => p.startsWith('/') || p.startsWith('tcp://') || p.startsWith('sim:') || /^COM\d+$/.test(p),
      'must be a device path (/dev/…), tcp://host:port, or sim:FILE',
    ),
  baud: z.number().int().positive().default(115200),
  inputs: z.number().int().min(1).max(64).optional(),
  /** Host-clock silence after which the decoder (and its loops) count as offline. */
  silence: duration.default(2000),
});

const loopSchema = loopTimingSchema.extend({
  id,
  name: z.string().min(1).max(80),
  decoder: id,
  input: z.number().int().min(1).max(64),
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
  email: z.email('must be an email address'),
  /** Web user name this contact signs in as; a mail reply may shelve only when that user is an operator or admin. */
  user: z.string().min(1).max(80).optional(),
});

const stepSchema = z.strictObject({
  after: duration,
  notify: z.array(id).min(1),
});

const policySchema = z.strictObject({
  steps: z.array(stepSchema).min(1),
  repeat_every: duration.optional(),
  max_repeats: z.number().int().min(0).default(10),
});

const smtpSchema = z.strictObject({
  host: z.string().min(1),
  port: z.number().int().min(1).max(65535).default(587),
  /** true: TLS from the first byte (port 465); false: STARTTLS when offered. */
  secure: z.boolean().default(false),
  user: z.string().optional(),
  pass: z.string().optional(),
  /** Name of an environment variable holding the password; keeps the secret out of the file. */
  pass_env: z.string().regex(/^[A-Z_][A-Z0-9_]*$/, 'must be an environment variable name').optional(),
  require_tls: z.boolean().default(false),
  timeout: duration.default(20_000),
});

/** The mailbox that receives replies to alarm mail; its presence turns on acknowledging by reply. */
const imapSchema = z.strictObject({
  host: z.string().min(1),
  /** 993 is IMAP over TLS from the first byte (RFC 8314 §3.3). */
  port: z.number().int().min(1).max(65535).default(993),
  secure: z.boolean().default(true),
  user: z.string().min(1),
  pass_env: z.string().regex(/^[A-Z_][A-Z0-9_]*$/, 'must be an environment variable name'),
  folder: z.string().min(1).default('INBOX'),
  /** Handled replies are moved here; without it they are only marked as read. */
  done_folder: z.string().min(1).optional(),
  /** Refuse replies whose DKIM signature does not verify (RFC 6376). */
  require_dkim: z.boolean().default(false),
});

const mailSchema = z
  .strictObject({
    from: z.string().min(3),
    smtp: smtpSchema.optional(),
    /** Where mail goes as .eml files when there is no SMTP server (the demo). Default: <data>/outbox-mail */
    drop_folder: z.string().optional(),
    group_window: duration.default(10_000),
    retry_first: duration.default(15_000),
    retry_max: duration.default(900_000),
    /** Consecutive failed attempts before "mail failing" is raised. */
    failing_after: z.number().int().min(1).default(3),
    imap: imapSchema.optional(),
  })
  .prefault({ from: "pairwatch <pairwatch@localhost>" });

const reportSchema = z
  .strictObject({
    at: localTime.default('07:00'),
    notify: z.array(id).default([]),
  })
  .prefault({});

const retentionSchema = z
  .strictObject({
    edges: duration.default(6 * 3_600_000),
    minute_quality: duration.default(90 * 86_400_000),
    hourly_quality: duration.default(5 * 365 * 86_400_000),
    backups_kept: z.number().int().min(0).default(7),
  })
  .prefault({});

const storageSchema = z.strictObject({
  path: z.string().min(1),
  retention: retentionSchema,
});

const webSchema = z
  .strictObject({
    listen: z
      .string()
      .regex(/^(\[[0-9a-fA-F:]+\]|[A-Za-z0-9.-]+):\d{1,5}$/, 'must be HOST:PORT, e.g. 127.0.0.1:8080')
      .default('127.0.0.1:8080'),
    /** The address people reach the server at, for links in mail. Default http://<listen>. */
    public_url: z.url('must be a full URL such as https://monitor.example.org').optional(),
    tls: z.strictObject({ cert: z.string().min(1), key: z.string().min(1) }).optional(),
    session_ttl: duration.default(7 * 86_400_000),
    ack_link_ttl: duration.default(7 * 86_400_000),
    max_shelve: duration.default(24 * 3_600_000),
    login_attempts_per_minute: z.number().int().min(1).default(5),
  })
  .prefault({});

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
});

export type SiteConfigInput = z.input<typeof siteConfigSchema>;
export type SiteConfig = z.output<typeof siteConfigSchema>;
export type DecoderConfig = SiteConfig['decoders'][number];
export type LoopConfig = SiteConfig['loops'][number];
export type ContactConfig = SiteConfig['contacts'][number];
export type EscalationPolicyConfig = SiteConfig['escalation'][string];
export type MailConfig = SiteConfig['mail'];
export type ImapConfig = NonNullable<MailConfig['imap']>;
export type WebConfig = SiteConfig['web'];
