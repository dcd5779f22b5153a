import { stringify } from 'yaml';
import { parseConfig } from '../../src/config/loadConfig.js';
import type { SiteConfig } from '../../src/config/schema.js';

/**
 * Site configs for the benches, built as YAML and read through the real config parser so a bench
 * never runs on a config the daemon would refuse. The site is an invented one.
 */
export interface BenchSiteOptions {
  loops: number;
  /** Decoder port: a device path, tcp://host:port. */
  port: string;
  dbPath: string;
  /** web.listen; 127.0.0.1 only. Default 127.0.0.1:0 (any free port). */
  listen?: string;
  /** Host-time silence before the decoder counts as offline (default the daemon's own). */
  silence?: string;
  /** Extra top-level keys (contacts, escalation, mail, …). */
  extra?: Record<string, unknown>;
  /** Extra keys on every loop. */
  loopSettings?: Record<string, unknown>;
}

export const BENCH_SITE_NAME = 'Marrowby Bench Farm';

export function loopIdFor(input: number): string {
  return `shed-${String(input).padStart(2, '0')}`;
}

export function loopNameFor(input: number): string {
  return `Shed ${String(input).padStart(2, '0')}`;
}

export function benchSiteConfig(options: BenchSiteOptions): SiteConfig {
  const loops = Array.from({ length: options.loops }, (_, i) => ({
    id: loopIdFor(i + 1),
    name: loopNameFor(i + 1),
    decoder: 'main',
    input: i + 1,
    ...options.loopSettings,
  }));
  const doc = {
    site: { name: BENCH_SITE_NAME, timezone: 'UTC' },
    decoders: [{ id: 'main', port: options.port, inputs: options.loops, ...(options.silence ? { silence: options.silence } : {}) }],
    loops,
    storage: { path: options.dbPath },
    web: { listen: options.listen ?? '127.0.0.1:0' },
    ...options.extra,
  };
  return parseConfig(stringify(doc), 'bench site');
}
