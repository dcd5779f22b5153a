import { parseArgs } from 'node:util';
import { ConfigError } from '../config/configError.js';
import { createLogger } from '../daemon/createLogger.js';
import type { EstateConfig } from '../estate/estateConfigSchema.js';
import { loadEstateConfig } from '../estate/loadEstateConfig.js';
import { startEstate } from '../estate/startEstate.js';
import type { CliIo } from './cliTypes.js';
import { defineCommand } from './defineCommand.js';

export const ESTATE_USAGE = `usage: pairwatch estate --config FILE
Runs the estate board: no decoders; it reads many sites' states and alarms from an MQTT 5 broker
and serves read-only pages (every site worst first, one site's loops and alarms, recent events).
Users and API tokens: pairwatch user … --config FILE and pairwatch token … --config FILE work on
the estate's own database. See "Many sites" in the README for the file.
  --config FILE   the estate config (default config/estate.yaml)
  --help          this text
`;

export function loadEstateConfigForCli(file: string, io: CliIo): EstateConfig | null {
  try {
    return loadEstateConfig(file);
  } catch (err) {
    if (err instanceof ConfigError) {
      for (const line of err.lines()) io.stderr.write(`${file}: ${line}\n`);
      return null;
    }
    throw err;
  }
}

/** `pairwatch estate --config FILE`: runs until SIGTERM or SIGINT. */
export const estateCommand = defineCommand({ name: 'estate', usage: ESTATE_USAGE, run: async (argv, io) => {
  const { values } = parseArgs({ args: argv, options: { config: { type: 'string', default: 'config/estate.yaml' }, help: { type: 'boolean', short: 'h', default: false } } });
  if (values.help) {
    io.stdout.write(ESTATE_USAGE);
    return 0;
  }
  const file = values.config ?? 'config/estate.yaml';
  const config = loadEstateConfigForCli(file, io);
  if (!config) return 2;
  const logger = createLogger();
  let estate;
  try {
    estate = await startEstate({ config, logger, env: io.env });
  } catch (err) {
    const e = err as { code?: string; message: string };
    io.stderr.write(`pairwatch estate: cannot start: ${e.message}${e.code ? ` (${e.code})` : ''}\n`);
    return 1;
  }
  return new Promise<number>((resolveExit) => {
    const onSignal = (signal: NodeJS.Signals) => {
      logger.info({ signal }, `estate stopping on ${signal}`);
      estate.stop().then(() => resolveExit(0), () => resolveExit(1));
    };
    process.once('SIGTERM', onSignal);
    process.once('SIGINT', onSignal);
  });
} });
