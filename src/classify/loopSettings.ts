import type { LoopConfig } from '../config/schema.js';

/** Classifier settings for one loop, all in milliseconds. */
export interface LoopSettings {
  periodMs: number;
  pulseMinMs: number;
  pulseMaxMs: number;
  shortMs: number;
  openMs: number;
  tripMs: number;
  healthyPulses: number;
  intervalMinRatio: number;
  intervalMaxRatio: number;
  intermittentCount: number;
  intermittentWindowMs: number;
}

export const DEFAULT_LOOP_SETTINGS: LoopSettings = {
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
  intermittentWindowMs: 600_000,
};

export function loopSettingsFromConfig(loop: Pick<LoopConfig,
  'period_ms' | 'pulse_min_ms' | 'pulse_max_ms' | 'short_ms' | 'open_ms' | 'trip_ms' | 'healthy_pulses' |
  'interval_min_ratio' | 'interval_max_ratio' | 'intermittent_count' | 'intermittent_window'>): LoopSettings {
  return {
    periodMs: loop.period_ms,
    pulseMinMs: loop.pulse_min_ms,
    pulseMaxMs: loop.pulse_max_ms,
    shortMs: loop.short_ms,
    openMs: loop.open_ms,
    tripMs: loop.trip_ms ?? loop.period_ms * 3,
    healthyPulses: loop.healthy_pulses,
    intervalMinRatio: loop.interval_min_ratio,
    intervalMaxRatio: loop.interval_max_ratio,
    intermittentCount: loop.intermittent_count,
    intermittentWindowMs: loop.intermittent_window,
  };
}
