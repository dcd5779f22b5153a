import { describe, expect, it } from 'vitest';
import { loopTimingSchema } from '../../src/config/schema.js';
import { DEFAULT_LOOP_SETTINGS, initialLoopClassifier, isIntermittent, loopSettingsFromConfig, loopStateSinceUs } from '../../src/classify/loopClassifierState.js';
import { classify, edge, pulsesAt, tick, us } from './loopScript.js';

describe('loop settings', () => {
  it('defaults to the numbers of the specification (issue 2, "Loop classification")', () => {
    expect(DEFAULT_LOOP_SETTINGS).toEqual({
      periodMs: 500,
      pulseMinMs: 0.2,
      pulseMaxMs: 20,
      shortMs: 200,
      openMs: 200,
      tripMs: 1500,
      healthyPulses: 3,
      intervalMinRatio: 0.5,
      intervalMaxRatio: 1.5,
      intermittentCount: 3,
      intermittentWindowMs: 10 * 60_000,
    });
  });

  it('fills the same defaults from an empty config entry, trip window 3 periods of the configured period', () => {
    expect(loopSettingsFromConfig(loopTimingSchema.parse({}))).toEqual(DEFAULT_LOOP_SETTINGS);
    const slow = loopSettingsFromConfig(loopTimingSchema.parse({ period_ms: 2000, intermittent_window: '30m' }));
    expect(slow).toMatchObject({ periodMs: 2000, tripMs: 6000, intermittentWindowMs: 30 * 60_000 });
    expect(loopSettingsFromConfig(loopTimingSchema.parse({ trip_ms: 1089 })).tripMs).toBe(1089);
  });
});

describe('reading the classifier state from outside src/classify', () => {
  it('says since when the loop is in its state, and whether it is flagged intermittent', () => {
    // Healthy at the end of the third pulse, 1100–1101 ms (defaults: 3 pulses, 500 ms apart).
    const healthy = classify([edge('N', 0), ...pulsesAt([100, 600, 1100])]).state;
    expect(loopStateSinceUs(initialLoopClassifier())).toBeNull();
    expect(loopStateSinceUs(healthy)).toBe(us(1101));
    expect(isIntermittent(healthy)).toBe(false);
    // Open 300 ms, tripped 2500 ms, open 3200 ms: three entries in 10 minutes (README).
    const flagged = classify([edge('N', 0), edge('O', 100), edge('N', 1000), edge('O', 3000), tick('O', 3300)]).state;
    expect(isIntermittent(flagged)).toBe(true);
  });
});
