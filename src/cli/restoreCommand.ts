import { resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { restoreFrom } from '../store/restoreFrom.js';
import type { CliCommand } from './cliTypes.js';
import { DEFAULT_CONFIG_PATH, loadConfigForCli } from './loadConfigForCli.js';

/** `pairwatch restore FILE [--config FILE]`: replaces the database with a backup; the daemon must be stopped. */
export const restoreCommand: CliCommand = async (argv, io) => {
  const { values, positionals } = parseArgs({ args: argv, allowPositionals: true, options: { config: { type: 'string', default: DEFAULT_CONFIG_PATH } } });
  const source = positionals[0];
  if (!source) {
    io.stderr.write('usage: pairwatch restore FILE [--config FILE]   (stop the monitor first)\n');
    return 2;
  }
  const config = loadConfigForCli(values.config ?? DEFAULT_CONFIG_PATH, io);
  if (!config) return 2;
  const result = await restoreFrom(resolve(source), resolve(config.storage.path));
  io.stdout.write(
    `restored ${source} into ${config.storage.path} (schema version ${result.schemaVersion})` +
      (result.previousKeptAs ? `; the previous database is kept as ${result.previousKeptAs}` : '') +
      '\n',
  );
  return 0;
};
