import { parseArgs } from 'node:util';
import type { CliCommand } from './cliTypes.js';
import { defineCommand, UsageError } from './defineCommand.js';
import { DEFAULT_CONFIG_PATH } from './loadConfigForCli.js';
import { createDoctorDeps } from '../ops/doctor/defaultDoctorDeps.js';
import { formatCheckResult } from '../ops/doctor/checkResult.js';
import { doctorExitCode, runDoctor, type DoctorDeps } from '../ops/doctor/runDoctor.js';

const USAGE =
  'usage: pairwatch doctor [--config FILE] [--drift-seconds SECONDS]\n' +
  '  Checks the config, each decoder, mail, the web port, free disk and the clock; one line per check.\n' +
  '  --drift-seconds  how long to read each decoder for the clock-drift figure, 2 to 600 (default 5)\n';

/** `pairwatch doctor`: exit 0 when every check passed or only warned, 1 when one failed, 2 on bad usage. */
export function createDoctorCommand(makeDeps: (listenMs: number) => DoctorDeps = (listenMs) => createDoctorDeps({ listenMs })): CliCommand {
  return defineCommand({ name: 'doctor', usage: USAGE, run: async (argv, io) => {
    const { values } = parseArgs({
      args: argv,
      options: { config: { type: 'string', short: 'c' }, 'drift-seconds': { type: 'string' } },
      strict: true,
      allowPositionals: false,
    });
    const given = values['drift-seconds'];
    const listenSeconds = given === undefined ? 5 : Number(given);
    if (!Number.isFinite(listenSeconds) || listenSeconds < 2 || listenSeconds > 600) {
      throw new UsageError(`--drift-seconds must be a number of seconds from 2 to 600, not "${given}"`);
    }
    const file = values.config ?? DEFAULT_CONFIG_PATH;
    const results = await runDoctor(file, io.env, makeDeps(listenSeconds * 1000), (result) => io.stdout.write(`${formatCheckResult(result)}\n`));
    const failures = results.filter((r) => r.status === 'fail').length;
    const warnings = results.filter((r) => r.status === 'warn').length;
    io.stdout.write(
      failures === 0
        ? `\nAll ${results.length} checks passed${warnings ? ` (${warnings} with a warning)` : ''}.\n`
        : `\n${failures} of ${results.length} checks failed. Fix them from the top: later checks often depend on earlier ones.\n`,
    );
    return doctorExitCode(results);
  } });
}

export const doctorCommand: CliCommand = createDoctorCommand();
