import { renameSync, rmSync, statSync } from 'node:fs';
import { dirname } from 'node:path';
import type { Store } from './openStore.js';
import { makePrivateDir, makePrivateFile } from './privateFiles.js';
import { StoreError, describeError } from './storeError.js';

export interface BackupResult {
  file: string;
  bytes: number;
  pages: number;
}

const PAGES_PER_STEP = 1_000;
const ALL_REMAINING = 0x7fffffff;

/**
 * Copies the live database with SQLite's online backup into `file`, while the daemon keeps writing.
 * Written to a temporary name and renamed, so `file` is either the old copy or a complete new one.
 * The copy is owner-only (0600, folders made 0700) whatever the umask: it holds what the database holds.
 */
export async function backupTo(store: Pick<Store, 'db'>, file: string): Promise<BackupResult> {
  const partial = `${file}.partial`;
  try {
    makePrivateDir(dirname(file));
    rmSync(partial, { force: true });
    // SQLite writes into the existing empty file and keeps its mode.
    makePrivateFile(partial);
    let lastRemaining = Number.POSITIVE_INFINITY;
    const result = await store.db.backup(partial, {
      // Chunks keep the event loop responsive. A write from another connection restarts the copy; if that
      // happens, finish in one step (a single read snapshot) rather than restart for ever under steady ingest.
      progress({ remainingPages }) {
        const restarted = remainingPages > lastRemaining;
        lastRemaining = remainingPages;
        return restarted ? ALL_REMAINING : PAGES_PER_STEP;
      },
    });
    renameSync(partial, file);
    return { file, bytes: statSync(file).size, pages: result.totalPages };
  } catch (error) {
    removeQuietly(partial);
    throw new StoreError('PW_STORE_BACKUP_FAILED', `backup to ${file} failed: ${describeError(error)}`, { cause: error });
  }
}

function removeQuietly(file: string): void {
  try {
    rmSync(file, { force: true });
  } catch {
    // nothing there to remove (or its folder is unusable, which the error being thrown already says)
  }
}
