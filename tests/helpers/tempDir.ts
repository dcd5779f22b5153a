import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, afterEach } from 'vitest';

/** A fresh folder under the OS temp dir and the one call that removes it again. */
export interface TempDir {
  readonly dir: string;
  cleanup(): void;
}

/** For set-ups that must remove the folder at a moment of their own (after closing a database, unmounting …). */
export function makeTempDir(prefix = 'pw-test-'): TempDir {
  const dir = mkdtempSync(join(tmpdir(), prefix));
  return { dir, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

/**
 * Registers the removal of every folder the returned maker hands out: after each test (`'each'`) or
 * after the file or describe block it is called in (`'all'`). Call it before registering the file's
 * own teardown hooks: vitest runs after-hooks in reverse order, so the folders then go last, once
 * whatever was still using them (a port, a database, a child process) has been closed.
 */
export function useTempDirs(removeAfter: 'each' | 'all' = 'all'): (prefix: string) => string {
  const made: TempDir[] = [];
  const removeAll = () => {
    for (const temp of made.splice(0)) temp.cleanup();
  };
  if (removeAfter === 'each') afterEach(removeAll);
  else afterAll(removeAll);
  return (prefix) => {
    const temp = makeTempDir(prefix);
    made.push(temp);
    return temp.dir;
  };
}
