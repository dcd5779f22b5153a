import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { backupFileTo } from '../store/backup.js';
import { defineCommand, UsageError } from './defineCommand.js';
import { DEFAULT_CONFIG_PATH, loadConfigForCli } from './loadConfigForCli.js';

const USAGE = `usage: pairwatch backup FILE [--force] [--config FILE]
  An online copy of the database into FILE, safe while the monitor runs.
  --force  replace FILE if it exists (without it, an existing FILE is left alone)
`;

/** `pairwatch backup FILE [--config FILE]`: an online SQLite backup, safe while the monitor runs. */
export const backupCommand = defineCommand({ name: 'backup', usage: USAGE, run: async (argv, io) => {
  const { values, positionals } = parseArgs({
    args: argv,
    allowPositionals: true,
    options: { config: { type: 'string', default: DEFAULT_CONFIG_PATH }, force: { type: 'boolean', default: false } },
  });
  const target = positionals[0];
  if (!target) throw new UsageError('give the FILE to write the backup to');
  if (positionals.length > 1) throw new UsageError(`unexpected argument ${positionals[1]}`);
  if (existsSync(target) && !values.force) {
    io.stderr.write(`pairwatch backup: ${target} exists already; nothing was written. Give another name, or add --force to replace it\n`);
    return 1;
  }
  const config = loadConfigForCli(values.config ?? DEFAULT_CONFIG_PATH, io);
  if (!config) return 2;
  // Read-only, no lock, no migration: the daemon keeps running and writing while pages are copied.
  const result = await backupFileTo(resolve(config.storage.path), resolve(target));
  io.stdout.write(`backup written: ${result.file} (${result.bytes} bytes)\n`);
  return 0;
} });
