import { resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { backupFileTo } from '../store/backupFileTo.js';
import type { CliCommand } from './cliTypes.js';
import { DEFAULT_CONFIG_PATH, loadConfigForCli } from './loadConfigForCli.js';

/** `pairwatch backup FILE [--config FILE]`: an online SQLite backup, safe while the daemon runs. */
export const backupCommand: CliCommand = async (argv, io) => {
  const { values, positionals } = parseArgs({ args: argv, allowPositionals: true, options: { config: { type: 'string', default: DEFAULT_CONFIG_PATH } } });
  const target = positionals[0];
  if (!target) {
    io.stderr.write('usage: pairwatch backup FILE [--config FILE]\n');
    return 2;
  }
  const config = loadConfigForCli(values.config ?? DEFAULT_CONFIG_PATH, io);
  if (!config) return 2;
  // Read-only, no lock, no migration: the daemon keeps running and writing while pages are copied.
  const result = await backupFileTo(resolve(config.storage.path), resolve(target));
  io.stdout.write(`backup written: ${result.file} (${result.bytes} bytes)\n`);
  return 0;
};
