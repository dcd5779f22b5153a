import { describe, expect, it } from 'vitest';
import { estimateClockDrift, type TimedSample } from '../../../src/ops/doctor/clockDrift.js';

/** A decoder whose clock runs `ppm` fast, heard every `everyMs` with a repeating arrival delay pattern. */
function heard(ppm: number, count: number, everyMs: number, startDecoderUs = 1_000_000, delaysUs = [3000, 0, 7000, 1500]): TimedSample[] {
  const samples: TimedSample[] = [];
  for (let i = 0; i < count; i++) {
    const trueHostUs = 50_000_000 + i * everyMs * 1000;
    const decoderUs = startDecoderUs + (trueHostUs - 50_000_000) * (1 + ppm / 1e6);
    samples.push({ hostUs: trueHostUs + delaysUs[i % delaysUs.length]!, decoderTime: Math.round(decoderUs) % 4294967296 });
  }
  return samples;
}

describe('estimateClockDrift', () => {
  it('recovers a known rate error despite variable arrival delays', () => {
    // Constructed input: the decoder clock is made 250 ppm fast; the least-delayed samples carry no delay.
    const estimate = estimateClockDrift(heard(250, 200, 100));
    expect('ppm' in estimate).toBe(true);
    if (!('ppm' in estimate)) return;
    expect(estimate.ppm).toBeCloseTo(250, 0);
    expect(estimate.samples).toBe(200);
    // The run lasts 19.9 s and the two picks are at least half of it apart: 2 × 1 ms over 10–20 s.
    expect(estimate.spanMs).toBeGreaterThanOrEqual(9950);
    expect(estimate.uncertaintyPpm).toBeGreaterThanOrEqual(100);
    expect(estimate.uncertaintyPpm).toBeLessThanOrEqual(201);
  });

  it('reads a slow clock as negative', () => {
    const estimate = estimateClockDrift(heard(-1200, 100, 100));
    expect('ppm' in estimate && Math.round(estimate.ppm)).toBe(-1200);
  });

  it('unwraps the 32-bit µs counter when it wraps inside the run', () => {
    // Starts 1 s before the wrap at 4294.967296 s of decoder time.
    const estimate = estimateClockDrift(heard(100, 50, 100, 4294967296 - 1_000_000));
    expect('ppm' in estimate && Math.round(estimate.ppm)).toBe(100);
  });

  it('declines with too few frames or too short a span', () => {
    expect(estimateClockDrift(heard(0, 3, 100))).toEqual({ reason: expect.stringContaining('only 3 timed frames') });
    expect(estimateClockDrift(heard(0, 6, 10))).toEqual({ reason: expect.stringContaining('span only') });
  });
});
