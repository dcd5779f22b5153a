/** Parses durations written like `90s`, `20m`, `2h`, `1d`, `250ms` into milliseconds. */
const UNIT_MS = { ms: 1, s: 1000, m: 60_000, h: 3_600_000, d: 86_400_000 } as const;
const DURATION_RE = /^(\d+(?:\.\d+)?)(ms|s|m|h|d)$/;

export function parseDuration(text: string): number | undefined {
  const match = DURATION_RE.exec(text.trim());
  if (!match) return undefined;
  const value = Number(match[1]);
  const unit = match[2] as keyof typeof UNIT_MS;
  return Math.round(value * UNIT_MS[unit]);
}

export function formatDuration(ms: number): string {
  if (ms % 86_400_000 === 0 && ms > 0) return `${ms / 86_400_000}d`;
  if (ms % 3_600_000 === 0 && ms > 0) return `${ms / 3_600_000}h`;
  if (ms % 60_000 === 0 && ms > 0) return `${ms / 60_000}m`;
  if (ms % 1000 === 0) return `${ms / 1000}s`;
  return `${ms}ms`;
}
