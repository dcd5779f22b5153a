/** Short plain reasons for state changes, for the log, the store and the people reading them. */

/** Milliseconds without float noise: 1089.0000000000002 → "1089", 0.25 → "0.25". */
export function formatMs(ms: number): string {
  return String(Math.round(ms * 1000) / 1000);
}

export const stateReason = {
  healthy: (pulses: number) => `${pulses} valid heartbeat pulse${pulses === 1 ? '' : 's'} in a row at the expected interval`,
  tripped: (tripUs: number) => `no valid pulse for ${formatMs(tripUs / 1000)} ms`,
  open: (openUs: number) => `loop current below the open threshold for ${formatMs(openUs / 1000)} ms`,
  shorted: (shortUs: number) => `loop current above the high threshold for ${formatMs(shortUs / 1000)} ms`,
  restarted: () => 'decoder restarted: classification starts over',
  heardAgain: () => 'decoder heard again after being offline: classification starts over',
  offline: () => 'decoder silent or its port is gone',
} as const;
