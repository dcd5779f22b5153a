import { z } from 'zod';
import { duration, siteConfigSchema } from '../config/schema.js';

/**
 * The estate board's own config file (estate.yaml): one broker, the sites it watches, and the same
 * contacts, escalation, mail, storage and web blocks as a site (those parts are the site schema's own,
 * so they read and default identically). Strict: an unknown key is an error naming it.
 */
const id = z
  .string()
  .regex(/^[a-z0-9][a-z0-9_-]{0,39}$/, 'must be 1–40 of lower-case letters, digits, "-" or "_", starting with a letter or digit');
const site = siteConfigSchema.shape;

export const estateConfigSchema = z.strictObject({
  estate: z.strictObject({
    name: z.string().min(1).max(80),
    timezone: site.site.shape.timezone,
  }),
  mqtt: z.strictObject({
    url: z.string().regex(/^mqtts?:\/\/[^\s/]+$/, 'must be mqtt://HOST:PORT or mqtts://HOST:PORT (TLS)'),
    client_id: z.string().min(1).max(128).default('pairwatch-estate'),
    username: z.string().min(1).optional(),
    pass_env: z.string().regex(/^[A-Z_][A-Z0-9_]*$/, 'must be an environment variable name').optional(),
    ca: z.string().min(1).optional(),
    prefix: z.string().regex(/^[A-Za-z0-9_-]+(\/[A-Za-z0-9_-]+)*$/, 'must be topic levels of letters, digits, "-" or "_" joined by "/"').default('pairwatch'),
    keepalive: duration.refine((ms) => ms >= 1000 && ms <= 65_535_000, 'must be between 1s and 18h').default(30_000),
    session_expiry: duration.default(3_600_000),
    /** A site silent this long reads "site not reporting" even if its last status said online. Default: 3 of its heartbeats. */
    stale_after: duration.refine((ms) => ms >= 1000, 'must be at least 1s').optional(),
  }),
  sites: z
    .array(
      z.strictObject({
        id,
        name: z.string().min(1).max(80).optional(),
        /** The site's own pages, for acting on an alarm. */
        url: z.url('must be a full URL such as https://farm.example.org').optional(),
      }),
    )
    .min(1, 'needs at least one site'),
  contacts: site.contacts,
  escalation: site.escalation,
  mail: site.mail,
  storage: z.strictObject({ path: z.string().min(1) }),
  web: site.web,
});

export type EstateConfig = z.output<typeof estateConfigSchema>;
