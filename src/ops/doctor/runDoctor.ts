import type { SiteConfig } from '../../config/schema.js';
import { checkClockSync, type ClockSyncDeps } from './checkClockSync.js';
import { checkConfig } from './checkConfig.js';
import { checkDecoder, type DecoderCheckDeps } from './checkDecoder.js';
import { checkDatabase } from './checkDatabase.js';
import { checkDiskSpace, type DiskDeps } from './checkDiskSpace.js';
import type { CheckResult } from './checkResult.js';
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
