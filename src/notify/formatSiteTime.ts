const formatters = new Map<string, Intl.DateTimeFormat>();

function siteFormatter(timeZone: string): Intl.DateTimeFormat {
  let formatter = formatters.get(timeZone);
  // Stryker disable next-line ConditionalExpression: a cache; a new formatter on every call prints the same text
  if (!formatter) {
    formatter = new Intl.DateTimeFormat('en-GB', {
      timeZone,
      weekday: 'short',
      day: 'numeric',
      month: 'short',
      year: 'numeric',
      hour: '2-digit',
      minute: '2-digit',
      second: '2-digit',
      hourCycle: 'h23',
      timeZoneName: 'short',
    });
    formatters.set(timeZone, formatter);
  }
  return formatter;
}

/** `2026-03-03 06:12:07 UTC` — the unambiguous form people can compare across sites and logs. */
export function formatUtc(ms: number): string {
  return `${new Date(ms).toISOString().slice(0, 19).replace('T', ' ')} UTC`;
}

/** `Tue 3 Mar 2026, 06:12:07 GMT` in the site's zone; assembled from parts so ICU punctuation changes do not move it. */
export function formatSiteTime(ms: number, timeZone: string): string {
  const f: Record<string, string> = {};
  for (const part of siteFormatter(timeZone).formatToParts(new Date(ms))) f[part.type] = part.value;
  return `${f.weekday} ${f.day} ${f.month} ${f.year}, ${f.hour}:${f.minute}:${f.second} ${f.timeZoneName}`;
}

/** Site time with UTC beside it, unless the site runs on UTC anyway. */
export function formatSiteAndUtc(ms: number, timeZone: string): string {
  const utc = formatUtc(ms);
  if (timeZone === 'UTC' || timeZone === 'Etc/UTC') return utc;
  return `${formatSiteTime(ms, timeZone)} (${utc})`;
}

/** `3 h 12 min`, `45 s`: durations for people. */
export function formatElapsed(ms: number): string {
  const totalSeconds = Math.max(0, Math.round(ms / 1000));
  const days = Math.floor(totalSeconds / 86_400);
  const hours = Math.floor((totalSeconds % 86_400) / 3600);
  const minutes = Math.floor((totalSeconds % 3600) / 60);
  const seconds = totalSeconds % 60;
  if (days > 0) return `${days} d ${hours} h`;
  if (hours > 0) return `${hours} h ${minutes} min`;
  if (minutes > 0) return `${minutes} min`;
  return `${seconds} s`;
}
