import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { LineQuality } from '../../src/classify/index.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { summarizeLineQuality } from '../../src/store/lineQualityRepo.js';
import { makeTempDir } from '../helpers/tempDir.js';

const MIN = 60_000;
const START = Date.UTC(2026, 2, 1, 12, 0); // 2026-03-01T12:00Z

/** Counters for a list of pulse intervals, as the classifier would hand them over. */
function qualityOf(intervals: number[]): LineQuality {
  return {
    pulses: intervals.length,
    intervalCount: intervals.length,
    intervalSumMs: intervals.reduce((s, x) => s + x, 0),
    intervalSqSumMs: intervals.reduce((s, x) => s + x * x, 0),
    outOfTolerance: intervals.filter((x) => x < 250 || x > 750).length,
    glitches: 0,
    longPulses: 0,
    lostFrames: 0,
  };
}

/** Two-pass textbook mean and population standard deviation, independent of the sums the store keeps. */
function directStats(xs: number[]): { mean: number; sd: number } {
  const mean = xs.reduce((s, x) => s + x, 0) / xs.length;
  const sd = Math.sqrt(xs.reduce((s, x) => s + (x - mean) ** 2, 0) / xs.length);
  return { mean, sd };
}

describe('lineQualityRepo', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let store: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    store = openStore({ path: join(tmp.dir, 'pw.db') });
  });
  afterEach(() => {
    store.close();
    tmp.cleanup();
  });

  it('accumulates counters within a minute bucket and lists buckets in a time range', () => {
    store.lineQuality.upsertMinute('well-pit', START + 5_000, qualityOf([500, 502]));
    store.lineQuality.upsertMinute('well-pit', START + 41_000, qualityOf([498]));
    store.lineQuality.upsertMinute('well-pit', START + MIN, qualityOf([510]));
    store.lineQuality.upsertMinute('dairy', START, qualityOf([400]));
    const rows = store.lineQuality.list('well-pit', START, START + 2 * MIN);
    expect(rows.map((r) => [r.resolution, r.bucketMs, r.quality.pulses])).toEqual([
      ['minute', START, 3],
      ['minute', START + MIN, 1],
    ]);
    expect(rows[0]?.quality).toEqual(qualityOf([500, 502, 498]));
    expect(store.lineQuality.list('well-pit', START + MIN, START + 2 * MIN)).toHaveLength(1);
  });

  it('summarises mean and jitter equal to the direct computation from the raw intervals', () => {
    // A wandering 500 ms heartbeat with ±20 % jitter, spread over many buckets.
    const intervals: number[] = [];
    let seed = 7;
    for (let i = 0; i < 3_000; i++) {
      seed = (seed * 1_103_515_245 + 12_345) % 2 ** 31;
      intervals.push(400 + (seed / 2 ** 31) * 200);
    }
    for (let minute = 0; minute < 25; minute++) {
      store.lineQuality.upsertMinute('well-pit', START + minute * MIN, qualityOf(intervals.slice(minute * 120, minute * 120 + 120)));
    }
    const summary = summarizeLineQuality(store.lineQuality.list('well-pit', START, START + 60 * MIN).map((r) => r.quality));
    const direct = directStats(intervals);
    expect(summary.intervalCount).toBe(3_000);
    expect(summary.intervalMeanMs).toBeCloseTo(direct.mean, 9);
    expect(summary.intervalJitterMs).toBeCloseTo(direct.sd, 6);
    expect(summarizeLineQuality([]).intervalMeanMs).toBeNull();
  });
});
