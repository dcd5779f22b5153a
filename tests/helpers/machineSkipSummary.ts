import { existsSync, readFileSync, rmSync } from 'node:fs';
import { MACHINE_SKIPS_FILE } from './machineSkip.js';

/** vitest globalSetup: starts the run with no recorded skips and ends it by listing them (see machineSkip.ts). */
export default function setup(): () => void {
  rmSync(MACHINE_SKIPS_FILE, { force: true });
  return () => {
    if (!existsSync(MACHINE_SKIPS_FILE)) return;
    const lines = readFileSync(MACHINE_SKIPS_FILE, 'utf8').trim().split('\n').filter(Boolean);
    if (lines.length === 0) return;
    process.stdout.write(
      `\n${lines.length} test(s) SKIPPED because this machine does not allow mount or chattr (run as root to include them):\n` +
        lines.map((l) => `  - ${l}\n`).join(''),
    );
  };
}
