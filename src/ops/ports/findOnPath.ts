import { accessSync, constants } from 'node:fs';
import { delimiter, join } from 'node:path';

/** The full path of an executable found on PATH, or null. Used to explain a missing tool before using it. */
export function findOnPath(command: string, pathValue: string | undefined): string | null {
  for (const folder of (pathValue ?? '').split(delimiter)) {
    if (!folder) continue;
    const candidate = join(folder, command);
    try {
      accessSync(candidate, constants.X_OK);
      return candidate;
    } catch {
      // not here; try the next folder
    }
  }
  return null;
}
