/**
 * Nearest-rank percentile (the textbook definition: the smallest value with at least p % of the
 * samples at or below it), so p99 of 100 samples is the 99th smallest, never an interpolation.
 */
export function percentile(samples: readonly number[], p: number): number {
  if (samples.length === 0) return Number.NaN;
  const sorted = [...samples].sort((a, b) => a - b);
  const rank = Math.max(1, Math.ceil((p / 100) * sorted.length));
  return sorted[Math.min(rank, sorted.length) - 1]!;
}

export function median(samples: readonly number[]): number {
  return percentile(samples, 50);
}
