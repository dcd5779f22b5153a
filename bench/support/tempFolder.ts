import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export interface TempFolder {
  dir: string;
  path(name: string): string;
  remove(): void;
}

/** A scratch folder under the system temp dir; every bench cleans up after itself. */
export function makeTempFolder(prefix: string): TempFolder {
  const dir = mkdtempSync(join(tmpdir(), `pw-bench-${prefix}-`));
  return {
    dir,
    path: (name) => join(dir, name),
    remove: () => rmSync(dir, { recursive: true, force: true }),
  };
}
