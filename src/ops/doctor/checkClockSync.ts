import type { CheckResult } from './checkResult.js';
import { passed, warned } from './checkResult.js';

export interface ClockSyncDeps {
  /** stdout of `timedatectl show -p NTPSynchronized --value`, or null when it cannot be run. */
  timedatectl(): Promise<string | null>;
  /** systemd-timesyncd touches /run/systemd/timesync/synchronized once it has synchronised. */
  exists(path: string): Promise<boolean>;
}

export const TIMESYNC_FLAG = '/run/systemd/timesync/synchronized';

/** Is the system clock synchronised? Times in mail, logs and the daily report depend on it. */
export async function checkClockSync(deps: ClockSyncDeps): Promise<CheckResult> {
  const name = 'clock sync';
  const answer = (await deps.timedatectl())?.trim().toLowerCase();
  if (answer === 'yes') return passed(name, 'the system clock is synchronised (timedatectl)');
  if (answer === 'no') {
    return warned(name, 'the system clock is not synchronised (timedatectl)', 'turn on time sync: sudo timedatectl set-ntp true (needs systemd-timesyncd or chrony), and check the internet connection');
  }
  if (await deps.exists(TIMESYNC_FLAG)) return passed(name, `the system clock is synchronised (${TIMESYNC_FLAG})`);
  return warned(name, 'unknown: timedatectl could not tell and no time-sync flag was found', 'make sure a time-sync service (systemd-timesyncd or chrony) runs, or times in mail and logs may drift');
}
