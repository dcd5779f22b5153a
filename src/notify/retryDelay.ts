/**
 * Delay before the next attempt after `failures` failed attempts: `firstMs`, doubling each time,
 * never more than `maxMs`. Jitter only ever shortens the delay, so the promises "first retry within
 * retry_first" and "never longer than retry_max" hold with it.
 */
export interface RetryDelayOptions {
  firstMs: number;
  maxMs: number;
  /** 0..1: the largest share of the delay jitter may take off. 0 (default): no jitter. */
  jitterRatio?: number;
  /** Spreads rows apart deterministically (e.g. the outbox row id); the same key and attempt give the same delay. */
  jitterKey?: number;
}

/** 32-bit integer hash finaliser (xor-shift-multiply; constants of the published "lowbias32" mix, from memory). Any good mix would do. */
function mix32(value: number): number {
  let x = value >>> 0;
  x ^= x >>> 16;
  x = Math.imul(x, 0x7feb352d);
  x ^= x >>> 15;
  x = Math.imul(x, 0x846ca68b);
  x ^= x >>> 16;
  return x >>> 0;
}

export function retryDelayMs(failures: number, options: RetryDelayOptions): number {
  const { firstMs, maxMs } = options;
  const step = Math.max(1, Math.floor(failures));
  // Exponent capped so 2**n stays finite however many times a row has failed.
  const base = Math.min(maxMs, firstMs * 2 ** Math.min(step - 1, 40));
  const ratio = Math.min(1, Math.max(0, options.jitterRatio ?? 0));
  // Stryker disable next-line ConditionalExpression: a ratio of 0 takes nothing off anyway; the early return only skips the hash
  if (ratio === 0) return base;
  // Stryker disable next-line ArithmeticOperator: any key-and-attempt mix would do; the tests hold the spread and the bounds, not the values
  const fraction = mix32(((options.jitterKey ?? 0) * 2654435761 + step) | 0) / 0x1_0000_0000;
  return Math.round(base * (1 - ratio * fraction));
}
