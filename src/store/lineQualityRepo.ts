// Line quality per loop in time buckets, and the summary of a range of buckets.
import type { SqliteDatabase } from './openDatabase.js';
import type { LineQuality } from '../classify/index.js';
import { MINUTE_MS, floorTo, fromIso, toIso } from './isoTime.js';

export const QUALITY_RESOLUTIONS = ['minute', 'hour'] as const;
export type QualityResolution = (typeof QUALITY_RESOLUTIONS)[number];

/**
 * Upsert tail shared by the minute writes and retention's hourly fold: a bucket that exists already
 * gets the new counters added, so the two can never disagree about which columns are sums.
 */
export const ADD_TO_EXISTING_BUCKET = `ON CONFLICT (loop_id, resolution, bucket_at) DO UPDATE SET
      pulses = pulses + excluded.pulses,
      interval_count = interval_count + excluded.interval_count,
      interval_sum_ms = interval_sum_ms + excluded.interval_sum_ms,
      interval_sq_sum_ms = interval_sq_sum_ms + excluded.interval_sq_sum_ms,
      out_of_tolerance = out_of_tolerance + excluded.out_of_tolerance,
      glitches = glitches + excluded.glitches,
      long_pulses = long_pulses + excluded.long_pulses,
      lost_frames = lost_frames + excluded.lost_frames`;

export interface LineQualityRecord {
  loopId: string;
  resolution: QualityResolution;
  /** Start of the bucket, epoch ms. */
  bucketMs: number;
  quality: LineQuality;
}

export interface LineQualityRepo {
  /** Adds `quality` to the loop's minute bucket containing `bucketMs` (counters accumulate within a minute). */
  upsertMinute(loopId: string, bucketMs: number, quality: LineQuality): void;
  /** Rows with bucket start in [sinceMs, untilMs): minute rows, and hour rows where old minutes were folded. */
  list(loopId: string, sinceMs: number, untilMs: number): LineQualityRecord[];
}

interface QualityRow {
  loop_id: string;
  resolution: QualityResolution;
  bucket_at: string;
  pulses: number;
  interval_count: number;
  interval_sum_ms: number;
  interval_sq_sum_ms: number;
  out_of_tolerance: number;
  glitches: number;
  long_pulses: number;
  lost_frames: number;
}

export function createLineQualityRepo(db: SqliteDatabase): LineQualityRepo {
  const upsert = db.prepare(`
    INSERT INTO line_quality (loop_id, resolution, bucket_at, pulses, interval_count, interval_sum_ms, interval_sq_sum_ms,
                              out_of_tolerance, glitches, long_pulses, lost_frames)
    VALUES (@loopId, 'minute', @bucketAt, @pulses, @intervalCount, @intervalSumMs, @intervalSqSumMs,
            @outOfTolerance, @glitches, @longPulses, @lostFrames)
    ${ADD_TO_EXISTING_BUCKET}`);
  const list = db.prepare(
    'SELECT * FROM line_quality WHERE loop_id = ? AND bucket_at >= ? AND bucket_at < ? ORDER BY bucket_at, resolution',
  );

  return {
    upsertMinute(loopId, bucketMs, quality) {
      upsert.run({ loopId, bucketAt: toIso(floorTo(bucketMs, MINUTE_MS)), ...quality });
    },
    list(loopId, sinceMs, untilMs) {
      const rows = list.all(loopId, toIso(sinceMs), toIso(untilMs)) as QualityRow[];
      return rows.map((row) => ({
        loopId: row.loop_id,
        resolution: row.resolution,
        bucketMs: fromIso(row.bucket_at, `line_quality[${row.loop_id}].bucket_at`),
        quality: {
          pulses: row.pulses,
          intervalCount: row.interval_count,
          intervalSumMs: row.interval_sum_ms,
          intervalSqSumMs: row.interval_sq_sum_ms,
          outOfTolerance: row.out_of_tolerance,
          glitches: row.glitches,
          longPulses: row.long_pulses,
          lostFrames: row.lost_frames,
        },
      }));
    },
  };
}

export interface LineQualitySummary extends LineQuality {
  /** Mean pulse interval, ms; null without intervals. */
  intervalMeanMs: number | null;
  /** Population standard deviation of the pulse interval, ms; null without intervals. */
  intervalJitterMs: number | null;
}

/**
 * Adds up buckets (minute or hour, any mix) and derives mean and jitter from the sums. Sums and sums of
 * squares add across buckets, which is why folding minutes into hours keeps both figures computable.
 */
export function summarizeLineQuality(buckets: readonly LineQuality[]): LineQualitySummary {
  const total: LineQuality = {
    pulses: 0, intervalCount: 0, intervalSumMs: 0, intervalSqSumMs: 0,
    outOfTolerance: 0, glitches: 0, longPulses: 0, lostFrames: 0,
  };
  for (const b of buckets) {
    total.pulses += b.pulses;
    total.intervalCount += b.intervalCount;
    total.intervalSumMs += b.intervalSumMs;
    total.intervalSqSumMs += b.intervalSqSumMs;
    total.outOfTolerance += b.outOfTolerance;
    total.glitches += b.glitches;
    total.longPulses += b.longPulses;
    total.lostFrames += b.lostFrames;
  }
  if (total.intervalCount === 0) return { ...total, intervalMeanMs: null, intervalJitterMs: null };
  const mean = total.intervalSumMs / total.intervalCount;
  // Rounding can push E[x²] − E[x]² a hair below zero when every interval is equal.
  const variance = Math.max(0, total.intervalSqSumMs / total.intervalCount - mean * mean);
  return { ...total, intervalMeanMs: mean, intervalJitterMs: Math.sqrt(variance) };
}
