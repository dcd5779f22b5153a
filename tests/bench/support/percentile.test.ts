import { describe, expect, it } from 'vitest';
import { percentile } from '../../../bench/support/percentile.js';

describe('nearest-rank percentile', () => {
  // The worked example of the nearest-rank method in the Wikipedia article "Percentile"
  // (list 15, 20, 35, 40, 50), quoted from memory.
  it('matches the textbook nearest-rank example', () => {
    const list = [15, 20, 35, 40, 50];
    expect(percentile(list, 5)).toBe(15);
    expect(percentile(list, 30)).toBe(20);
    expect(percentile(list, 40)).toBe(20);
    expect(percentile(list, 50)).toBe(35);
    expect(percentile(list, 100)).toBe(50);
  });

  it('does not depend on input order, and an empty list has no percentile', () => {
    expect(percentile([50, 15, 40, 20, 35], 50)).toBe(35);
    expect(Number.isNaN(percentile([], 99))).toBe(true);
  });
});
