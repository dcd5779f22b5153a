import { describe, expect, it } from 'vitest';
import { parseDuration } from '../../src/config/duration.js';
import { siteConfigSchema } from '../../src/config/schema.js';
import { retryDelayMs } from '../../src/notify/retryDelay.js';

// The promise made to users (issue "Mail that is never lost"): first retry within 30 s, capped at 15 min.
const FIRST_RETRY_LIMIT_MS = 30_000;
const CAP_MS = 15 * 60_000;

function defaults() {
  const config = siteConfigSchema.parse({
    site: { name: 'Test' },
    decoders: [{ id: 'main', port: '/dev/null' }],
    loops: [{ id: 'a', name: 'A', decoder: 'main', input: 1 }],
    storage: { path: 'x.db' },
  });
  return { firstMs: config.mail.retry_first, maxMs: config.mail.retry_max };
}

describe('retryDelayMs', () => {
  it('keeps the configured defaults inside the promise', () => {
    const { firstMs, maxMs } = defaults();
    expect(firstMs).toBeLessThanOrEqual(FIRST_RETRY_LIMIT_MS);
    expect(maxMs).toBe(CAP_MS);
  });

  it('starts at retry_first, doubles, and stops at retry_max', () => {
    const options = { firstMs: parseDuration('15s')!, maxMs: parseDuration('15m')! };
    const delays = Array.from({ length: 10 }, (_, i) => retryDelayMs(i + 1, options));
    // 15 s · 2^(n−1): 15, 30, 60, 120, 240, 480 s, then the 900 s cap.
    expect(delays).toEqual([15_000, 30_000, 60_000, 120_000, 240_000, 480_000, 900_000, 900_000, 900_000, 900_000]);
  });

  it('stays finite after a very long outage', () => {
    expect(retryDelayMs(10_000, { firstMs: 15_000, maxMs: 900_000 })).toBe(900_000);
  });

  it('jitter only shortens, is deterministic per key and attempt, and spreads keys apart', () => {
    const options = { firstMs: 15_000, maxMs: 900_000, jitterRatio: 0.2 };
    for (let attempt = 1; attempt <= 12; attempt++) {
      const plain = retryDelayMs(attempt, { firstMs: 15_000, maxMs: 900_000 });
      for (let key = 1; key <= 50; key++) {
        const d = retryDelayMs(attempt, { ...options, jitterKey: key });
        expect(d).toBeLessThanOrEqual(plain);
        expect(d).toBeGreaterThanOrEqual(plain * 0.8);
        expect(retryDelayMs(attempt, { ...options, jitterKey: key })).toBe(d);
      }
    }
    const spread = new Set(Array.from({ length: 50 }, (_, key) => retryDelayMs(3, { ...options, jitterKey: key })));
    expect(spread.size).toBeGreaterThan(10);
  });

  it('a failure count below one or with a fraction counts as whole failures, at least the first (README: 15 s, doubling)', () => {
    const options = { firstMs: 15_000, maxMs: 900_000 };
    expect(retryDelayMs(0, options)).toBe(15_000);
    expect(retryDelayMs(-3, options)).toBe(15_000);
    expect(retryDelayMs(2.7, options)).toBe(30_000);
    expect(retryDelayMs(3, options)).toBe(60_000);
  });

  it('a jitter share above 1 takes at most the whole delay; one below 0 takes nothing', () => {
    const plain = { firstMs: 15_000, maxMs: 900_000 };
    const wide = Array.from({ length: 40 }, (_, key) => retryDelayMs(4, { ...plain, jitterRatio: 5, jitterKey: key }));
    for (const d of wide) {
      expect(d).toBeGreaterThanOrEqual(0);
      expect(d).toBeLessThanOrEqual(120_000);
    }
    // Taking up to all of it, some delays fall below what a share of 0.5 would allow.
    expect(wide.some((d) => d < 60_000)).toBe(true);
    for (let key = 0; key < 20; key++) expect(retryDelayMs(4, { ...plain, jitterRatio: -1, jitterKey: key })).toBe(120_000);
  });

  it('without a key every row gets the same jitter for the same attempt', () => {
    const options = { firstMs: 15_000, maxMs: 900_000, jitterRatio: 0.5 };
    expect(retryDelayMs(2, options)).toBe(retryDelayMs(2, { ...options, jitterKey: 0 }));
  });
});
