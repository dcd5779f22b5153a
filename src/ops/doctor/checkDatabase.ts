import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { fileIntegrityProblems, restoreAdvice } from '../../store/backup.js';
import type { CheckResult } from './checkResult.js';
import { failed, passed } from './checkResult.js';

/**
 * The database file's own consistency: PRAGMA integrity_check, read-only, so it can run beside the
 * service. Slow on a big file (it reads every page and index), which is why the daemon does only the
 * quick form at start and the full one once a day.
 */
export async function checkDatabase(storagePath: string): Promise<CheckResult> {
  const name = 'database';
  const file = resolve(storagePath);
  if (!existsSync(file)) return passed(name, `${file} does not exist yet (the monitor makes it on first start)`);
  const problems = fileIntegrityProblems(file, 'full');
  if (problems.length === 0) return passed(name, `${file}: integrity_check ok`);
  return failed(name, `${file} is damaged (integrity_check: ${problems.slice(0, 3).join('; ')})`, restoreAdvice(file));
}
