import type { LoopSettings } from './loopSettings.js';

/**
 * A loop's settings converted once into whole decoder microseconds, the unit every comparison in the
 * classifier is made in. Rounding to 1 µs matches the decoder's own timestamp resolution, so a window
 * expires on a time the decoder could actually have reported.
 */
export interface LoopWindows {
  pulseMinUs: number;
  pulseMaxUs: number;
  shortUs: number;
  openUs: number;
  tripUs: number;
  /**
   * How far a pulse that lost frames may have hidden can push a trip past the last sign of life really
   * seen: half a period (250 ms at the default 500 ms). In fault simulations at 10 % garbled lines it
   * removed nearly all false trips; more bought little and only delayed real trips further.
   */
  hiddenPulseGraceUs: number;
  intervalMinUs: number;
  intervalMaxUs: number;
  healthyPulses: number;
  intermittentCount: number;
  intermittentWindowUs: number;
}

const toUs = (ms: number): number => Math.round(ms * 1000);

export function loopWindows(settings: LoopSettings): LoopWindows {
  return {
    pulseMinUs: toUs(settings.pulseMinMs),
    pulseMaxUs: toUs(settings.pulseMaxMs),
    shortUs: toUs(settings.shortMs),
    openUs: toUs(settings.openMs),
    tripUs: toUs(settings.tripMs),
    hiddenPulseGraceUs: toUs(settings.periodMs / 2),
    intervalMinUs: toUs(settings.periodMs * settings.intervalMinRatio),
    intervalMaxUs: toUs(settings.periodMs * settings.intervalMaxRatio),
    healthyPulses: Math.max(1, Math.floor(settings.healthyPulses)),
    intermittentCount: Math.max(1, Math.floor(settings.intermittentCount)),
    intermittentWindowUs: toUs(settings.intermittentWindowMs),
  };
}
