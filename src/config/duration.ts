/**
 * Durations written like `250ms`, `90s`, `20m`, `2h`, `1d`, `2w` or `5y`, in milliseconds.
 * A year is counted as 365 days and a week as 7: retention periods need no calendar.
 */
const UNIT_MS = { ms: 1, s: 1000, m: 60_000, h: 3_600_000, d: 86_400_000, w: 7 * 86_400_000, y: 365 * 86_400_000 } as const;
const DURATION_RE = /^(\d+(?:\.\d+)?)\s*(ms|s|m|h|d|w|y)$/;

/** The exact value, fractions of a millisecond kept (pulse widths such as `0.2ms`). */
export function parseDurationExact(text: string): number | undefined {
  const match = DURATION_RE.exec(text.trim());
  if (!match) return undefined;
  return Number(match[1]) * UNIT_MS[match[2] as keyof typeof UNIT_MS];
}

/** Whole milliseconds, for everything but pulse widths. */
export function parseDuration(text: string): number | undefined {
  const exact = parseDurationExact(text);
  return exact === undefined ? undefined : Math.round(exact);
}

export function formatDuration(ms: number): string {
  if (ms > 0 && ms % UNIT_MS.y === 0) return `${ms / UNIT_MS.y}y`;
  if (ms > 0 && ms % UNIT_MS.d === 0) return `${ms / UNIT_MS.d}d`;
  if (ms > 0 && ms % UNIT_MS.h === 0) return `${ms / UNIT_MS.h}h`;
  if (ms > 0 && ms % UNIT_MS.m === 0) return `${ms / UNIT_MS.m}m`;
  if (ms % 1000 === 0) return `${ms / 1000}s`;
  return `${ms}ms`;
}
