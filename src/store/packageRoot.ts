import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * The folder holding pairwatch's package.json, found by walking up from this module. The same code
 * runs from src/store (vitest) and from dist/src/store (after tsc), so a fixed `../..` would be wrong
 * in one of them.
 */
export function findPackageRoot(fromUrl: string = import.meta.url): string {
  let dir = dirname(fileURLToPath(fromUrl));
  for (;;) {
    const candidate = join(dir, 'package.json');
    if (existsSync(candidate)) {
      try {
        const pkg = JSON.parse(readFileSync(candidate, 'utf8')) as { name?: unknown };
        if (pkg.name === 'pairwatch') return dir;
      } catch {
        // an unreadable package.json is not ours; keep walking
      }
    }
    const parent = dirname(dir);
    if (parent === dir) throw new Error('pairwatch package root not found above ' + fileURLToPath(fromUrl));
    dir = parent;
  }
}

export function defaultMigrationsDir(): string {
  return join(findPackageRoot(), 'migrations');
}
