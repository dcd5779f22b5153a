export const MINUTE_MS = 60_000;
export const HOUR_MS = 3_600_000;

export function floorTo(ms: number, stepMs: number): number {
  return Math.floor(ms / stepMs) * stepMs;
}
