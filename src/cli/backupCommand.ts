import { resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { backupTo } from '../store/backupTo.js';
import { openStore } from '../store/openStore.js';
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
  // No lock: the daemon keeps running and writing while the backup copies pages.
  const store = openStore({ path: resolve(config.storage.path), lock: false });
  try {
    const result = await backupTo(store, resolve(target));
    io.stdout.write(`backup written: ${result.file} (${result.bytes} bytes)\n`);
    return 0;
  } finally {
    store.close();
  }
};
