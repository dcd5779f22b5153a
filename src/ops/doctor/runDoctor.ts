import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { ConfigError } from '../../config/configError.js';
import type { SiteConfig } from '../../config/schema.js';
import { fileIntegrityProblems, restoreAdvice } from '../../store/backup.js';
import { checkClockSync, type ClockSyncDeps } from './checkClockSync.js';
import { checkDecoder, type DecoderCheckDeps } from './checkDecoder.js';
import { checkDiskSpace, type DiskDeps } from './checkDiskSpace.js';
import type { CheckResult } from './checkResult.js';
import { failed, passed } from './checkResult.js';
import { checkImap } from './checkImap.js';
import { checkSmtp, type SmtpVerifier } from './checkSmtp.js';
import { checkWebPort, type WebPortDeps } from './checkWebPort.js';

export interface DoctorDeps {
  loadConfig: (file: string) => SiteConfig;
  decoder: DecoderCheckDeps;
  verifySmtp: SmtpVerifier;
  web: WebPortDeps;
  disk: DiskDeps;
  clock: ClockSyncDeps;
  /** The database file's integrity (default: PRAGMA integrity_check on the real file). */
  database?: (storagePath: string) => Promise<CheckResult>;
}

/**
 * Runs every check in a fixed order and hands each result on as soon as it is known (decoder checks
 * take seconds). Without a valid config only the checks that need none still run.
 */
export async function runDoctor(
  configFile: string,
  env: NodeJS.ProcessEnv,
  deps: DoctorDeps,
  onResult: (result: CheckResult) => void = () => {},
): Promise<CheckResult[]> {
  const results: CheckResult[] = [];
  const report = (result: CheckResult) => {
    results.push(result);
    onResult(result);
  };
  const { result, config } = checkConfig(configFile, deps.loadConfig);
  report(result);
  if (config) {
    for (const decoder of config.decoders) {
      const inputs = config.loops.filter((loop) => loop.decoder === decoder.id).map((loop) => loop.input);
      for (const r of await checkDecoder(decoder, Math.max(0, ...inputs), deps.decoder)) report(r);
    }
    report(await checkSmtp(config.mail, env, deps.verifySmtp));
    if (config.mail.imap) report(await checkImap(config.mail, env));
    report(await checkWebPort(config.web, deps.web));
    report(await checkDiskSpace(config.storage.path, deps.disk));
    report(await (deps.database ?? checkDatabase)(config.storage.path));
  }
  report(await checkClockSync(deps.clock));
  return results;
}

/** Exit code: 0 when nothing failed (warnings allowed), 1 otherwise. */
export function doctorExitCode(results: readonly CheckResult[]): 0 | 1 {
  return results.some((r) => r.status === 'fail') ? 1 : 0;
}

interface ConfigCheckOutcome {
  result: CheckResult;
  /** Present when the file is valid; the other checks need it. */
  config?: SiteConfig;
}

/** Loads the site config; every problem the loader reports appears in the finding, one per line. */
function checkConfig(file: string, load: (file: string) => SiteConfig): ConfigCheckOutcome {
  try {
    const config = load(file);
    const loops = config.loops.length;
    const decoders = config.decoders.length;
    return {
      result: passed('config', `${file} is valid (${decoders} decoder${decoders === 1 ? '' : 's'}, ${loops} loop${loops === 1 ? '' : 's'})`),
      config,
    };
  } catch (err) {
    if (err instanceof ConfigError) {
      const lines = err.lines();
      return {
        result: failed(
          'config',
          `${file} has ${lines.length} problem${lines.length === 1 ? '' : 's'}:\n        ${lines.join('\n        ')}`,
          `edit ${file} and correct each line above; \`pairwatch check-config ${file}\` re-checks it`,
        ),
      };
    }
    return { result: failed('config', `${file} could not be checked: ${(err as Error).message}`, 'run `pairwatch check-config` on it') };
  }
}

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
