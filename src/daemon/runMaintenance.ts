import { join } from 'node:path';
import type { Logger } from 'pino';
import type { SiteConfig } from '../config/schema.js';
import { applyRetention, pruneEdges } from '../store/retention.js';
import { integrityProblems, restoreAdvice, dailyBackup } from '../store/backup.js';
import type { Store } from '../store/openStore.js';

const DAY_MS = 86_400_000;
const LAST_RUN_KEY = 'daemon.maintenance.last_run';

/**
 * Hourly and daily housekeeping: integrity_check, retention and compaction, then the daily backup. Checked every hour and run
 * when a day has passed since the last run (kept in the database, so a restart does not repeat it).
 */
export async function runMaintenance(options: {
  config: SiteConfig;
  store: Store;
  now: number;
  logger: Logger;
  force?: boolean;
  /** Told when integrity_check finds damage (the daemon raises "storage damaged"); `[]` never comes here. */
  onDamaged?: (problems: string[]) => void;
  /** Told when the daily integrity_check finds the file intact. */
  onIntact?: () => void;
}): Promise<boolean> {
  const { config, store, now, logger } = options;
  // The edge ring is pruned every hour, so it stays near its 6-hour size between the daily runs.
  pruneEdges(store, config.storage.retention.edges, now);
  const last = Number(store.kv.get(LAST_RUN_KEY) ?? 0);
  if (!options.force && now - last < DAY_MS) return false;
  store.kv.set(LAST_RUN_KEY, String(now));
  // The full check first: a damaged file must not be compacted further, nor copied over a good backup.
  const problems = integrityProblems(store.db, 'full');
  if (problems.length > 0) {
    logger.error({ problems }, `the database is damaged (integrity_check: ${problems.slice(0, 3).join('; ')}); no backup made today; ${restoreAdvice(store.path)}`);
    options.onDamaged?.(problems);
    return true;
  }
  options.onIntact?.();
  const retention = applyRetention(store, config.storage.retention, now);
  logger.info(retention, `retention applied: ${retention.edgesDeleted} old edges removed, database ${retention.bytesAfter} bytes`);
  const dir = join(store.path, '..', 'backups');
  const backup = await dailyBackup(store, dir, config.storage.retention.backups_kept, now, config.site.timezone);
  if (backup.backup) logger.info({ backup: backup.backup, removed: backup.removed }, 'daily backup written');
  return true;
}
