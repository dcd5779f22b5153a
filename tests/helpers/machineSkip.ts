import { appendFileSync, mkdirSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

/**
 * Tests that need what only root may do (mount a tmpfs, chattr +i) skip themselves on a machine that
 * does not allow it. Such a skip must not go unnoticed: each is written to MACHINE_SKIPS_FILE, the run's
 * summary lists them (machineSkipSummary.ts), and .ci/run fails when there is any, since CI runs as root.
 */
export const MACHINE_SKIPS_FILE = join(dirname(fileURLToPath(import.meta.url)), '..', '.output', 'machine-skips.txt');

interface SkipContext {
  skip(note?: string): never;
  task: { name: string; file?: { name: string } };
}

export function skipForMachine(ctx: SkipContext, reason: string): never {
  mkdirSync(dirname(MACHINE_SKIPS_FILE), { recursive: true });
  appendFileSync(MACHINE_SKIPS_FILE, `${ctx.task.file?.name ?? '?'} > ${ctx.task.name}: ${reason.replace(/\s+/g, ' ')}\n`);
  return ctx.skip(reason);
}
