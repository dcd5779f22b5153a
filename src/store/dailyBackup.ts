import { existsSync, readdirSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import type { Store } from './openStore.js';
import { backupTo, type BackupResult } from './backupTo.js';

export const DAILY_BACKUP_PATTERN = /^pairwatch-(\d{8})\.db$/;

export interface DailyBackupResult {
  /** null when keep is 0 (daily backups switched off). */
  backup: BackupResult | null;
  removed: string[];
}

/** `pairwatch-YYYYMMDD.db` for the calendar day of `nowMs` in `timeZone` (the site's, so it matches the office wall). */
export function dailyBackupName(nowMs: number, timeZone = 'UTC'): string {
  const parts = new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).formatToParts(
    new Date(nowMs),
  );
  const part = (type: string): string => parts.find((p) => p.type === type)?.value ?? '';
  return `pairwatch-${part('year')}${part('month')}${part('day')}.db`;
}

/**
 * Writes today's backup into `dir` (replacing an earlier one of the same day) and keeps only the newest
 * `keep` daily files. Other files in the folder are never touched.
 */
export async function dailyBackup(
  store: Pick<Store, 'db'>,
  dir: string,
  keep: number,
  nowMs: number,
  timeZone = 'UTC',
): Promise<DailyBackupResult> {
  if (keep <= 0) return { backup: null, removed: [] };
  const backup = await backupTo(store, join(dir, dailyBackupName(nowMs, timeZone)));
  const daily = readdirSync(dir)
    .filter((name) => DAILY_BACKUP_PATTERN.test(name))
    .sort()
    .reverse();
  const removed: string[] = [];
  for (const name of daily.slice(keep)) {
    rmSync(join(dir, name), { force: true });
    removed.push(name);
  }
  return { backup, removed };
}

/** The newest `pairwatch-YYYYMMDD.db` in `dir`, as a full path, or null when there is none. */
export function newestDailyBackup(dir: string): string | null {
  if (!existsSync(dir)) return null;
  const newest = readdirSync(dir).filter((name) => DAILY_BACKUP_PATTERN.test(name)).sort().pop();
  return newest === undefined ? null : join(dir, newest);
}
