import { describe, expect, it } from 'vitest';
import { loopTimingSchema } from '../../src/config/schema.js';
import { DEFAULT_LOOP_SETTINGS, loopSettingsFromConfig } from '../../src/classify/loopClassifierState.js';

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
