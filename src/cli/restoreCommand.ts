import { resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { restoreFrom } from '../store/backup.js';
import { StoreError } from '../store/storeError.js';
import { defineCommand, UsageError } from './defineCommand.js';
import { DEFAULT_CONFIG_PATH, loadConfigForCli } from './loadConfigForCli.js';

const USAGE = `usage: pairwatch restore FILE [--config FILE]
  Replaces the database with the backup FILE, after checking it is a pairwatch database this version
  can read; the replaced file is kept beside it. Stop the service first: sudo systemctl stop pairwatch
`;

/** `pairwatch restore FILE [--config FILE]`: replaces the database with a backup; the service must be stopped. */
export const restoreCommand = defineCommand({ name: 'restore', usage: USAGE, run: async (argv, io) => {
  const { values, positionals } = parseArgs({ args: argv, allowPositionals: true, options: { config: { type: 'string', default: DEFAULT_CONFIG_PATH } } });
  const source = positionals[0];
  if (!source) throw new UsageError('give the backup FILE to restore from');
  if (positionals.length > 1) throw new UsageError(`unexpected argument ${positionals[1]}`);
  const config = loadConfigForCli(values.config ?? DEFAULT_CONFIG_PATH, io);
  if (!config) return 2;
  let result;
  try {
    result = await restoreFrom(resolve(source), resolve(config.storage.path));
  } catch (err) {
    if (err instanceof StoreError && err.code === 'PW_STORE_LOCKED') {
      io.stderr.write(
        `pairwatch restore: the monitor is running on ${config.storage.path}; nothing was changed.\n` +
          '  Stop it first: sudo systemctl stop pairwatch (or Ctrl-C a pairwatch run in a terminal),\n' +
          `  restore, then start it again: sudo systemctl start pairwatch\n`,
      );
      return 1;
    }
    throw err;
  }
  io.stdout.write(
    `restored ${source} into ${config.storage.path} (schema version ${result.schemaVersion})` +
      (result.previousKeptAs ? `; the previous database is kept as ${result.previousKeptAs}` : '') +
      '\n',
  );
  return 0;
} });
