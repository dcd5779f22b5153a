import { existsSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { AlarmRecord } from '../alarms/alarmTypes.js';

/**
 * The last resort of a stop while the disk is full: the open alarms, the writes that never reached the
 * database and the notices never mailed go into one JSON file beside the database, so the next start
 * (and a person) can see what happened. The disk is full by definition, so the space is set aside at
 * start: `reserveSpace` writes a filler file that this function deletes just before writing.
 */
export const RESERVE_FILE = 'space-reserved-for-unsaved-alarms';
const RESERVE_BYTES = 256 * 1024;
export const UNSAVED_PREFIX = 'unsaved-alarms-';

export interface UnsavedAlarms {
  at: number;
  queued: Record<string, number>;
  alarms: readonly AlarmRecord[];
  unmailed: readonly unknown[];
}

/** Sets the space aside (once); a failure only means the last resort may not fit, so it is not thrown. */
export function reserveSpace(dataDir: string): boolean {
  const path = join(dataDir, RESERVE_FILE);
  if (existsSync(path)) return true;
  try {
    writeFileSync(path, Buffer.alloc(RESERVE_BYTES));
    return true;
  } catch {
    rmSync(path, { force: true });
    return false;
  }
}

/** Writes the file into the first folder that takes it; returns its path, or null when none did. */
export function writeUnsavedAlarms(folders: readonly string[], unsaved: UnsavedAlarms): string | null {
  const text = `${JSON.stringify({ ...unsaved, at: new Date(unsaved.at).toISOString() }, null, 2)}\n`;
  const name = `${UNSAVED_PREFIX}${new Date(unsaved.at).toISOString().replace(/[:.]/g, '-')}.json`;
  for (const folder of folders) {
    rmSync(join(folder, RESERVE_FILE), { force: true });
    try {
      writeFileSync(join(folder, name), text);
      return join(folder, name);
    } catch {
      // next folder
    }
  }
  return null;
}

/** Files a previous stop left behind (oldest first), for the start-up log. */
export function findUnsavedAlarms(dataDir: string): string[] {
  try {
    return readdirSync(dataDir).filter((f) => f.startsWith(UNSAVED_PREFIX)).sort().map((f) => join(dataDir, f));
  } catch {
    return [];
  }
}
