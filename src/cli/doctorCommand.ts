import { parseArgs } from 'node:util';
import type { CliCommand } from './cliTypes.js';
import { DEFAULT_CONFIG_PATH } from './loadConfigForCli.js';
import { createDoctorDeps } from '../ops/doctor/defaultDoctorDeps.js';
import { formatCheckResult } from '../ops/doctor/formatCheckResult.js';
import { doctorExitCode, runDoctor, type DoctorDeps } from '../ops/doctor/runDoctor.js';

const USAGE =
  'usage: pairwatch doctor [--config FILE] [--listen SECONDS]\n' +
  '  Checks the config, each decoder, mail, the web port, free disk and the clock; one line per check.\n' +
  '  --listen  how long to listen to each decoder for the clock-drift figure (default 5)\n';

/** `pairwatch doctor`: exit 0 when every check passed or only warned, 1 when one failed, 2 on bad usage. */
export function createDoctorCommand(makeDeps: (listenMs: number) => DoctorDeps = (listenMs) => createDoctorDeps({ listenMs })): CliCommand {
  return async (argv, io) => {
    let values: { config?: string | undefined; listen?: string | undefined; help?: boolean | undefined };
    try {
      ({ values } = parseArgs({
        args: argv,
        options: { config: { type: 'string', short: 'c' }, listen: { type: 'string' }, help: { type: 'boolean', short: 'h' } },
        strict: true,
        allowPositionals: false,
      }));
    } catch (err) {
      io.stderr.write(`pairwatch doctor: ${(err as Error).message}\n${USAGE}`);
      return 2;
    }
    if (values.help) {
      io.stdout.write(USAGE);
      return 0;
    }
    const listenSeconds = values.listen === undefined ? 5 : Number(values.listen);
    if (!Number.isFinite(listenSeconds) || listenSeconds < 2 || listenSeconds > 600) {
      io.stderr.write(`pairwatch doctor: --listen must be a number of seconds from 2 to 600, not "${values.listen}"\n`);
      return 2;
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
  };
}

export const doctorCommand: CliCommand = createDoctorCommand();
