import { parseArgs } from 'node:util';
import { checkSurroundings } from '../config/checkSurroundings.js';
import { defineCommand, UsageError } from './defineCommand.js';
import { DEFAULT_CONFIG_PATH, loadConfigForCli } from './loadConfigForCli.js';

const count = (n: number, word: string) => `${n} ${word}${n === 1 ? '' : 's'}`;

const USAGE = `usage: pairwatch check-config [FILE]
  Validates a site config (default ${DEFAULT_CONFIG_PATH}; --config FILE works too) and prints every problem
  as "path: reason", or a one-line summary. Also checks what the monitor would refuse at start: a storage
  path that is a folder, unreadable TLS files, an unset mail.smtp.pass_env variable. Exit 2 on any problem.
  New site? Copy config/example.yaml to ${DEFAULT_CONFIG_PATH} and edit it.
`;

/** `pairwatch check-config [FILE]`: validates a site config and prints every problem, one per line. */
export const checkConfigCommand = defineCommand({ name: 'check-config', usage: USAGE, run: async (argv, io) => {
  const { positionals, values } = parseArgs({ args: argv, allowPositionals: true, options: { config: { type: 'string' } } });
  if (positionals.length > 1) throw new UsageError(`give one config file, not ${positionals.length}`);
  const file = positionals[0] ?? values.config ?? DEFAULT_CONFIG_PATH;
  const config = loadConfigForCli(file, io);
  if (!config) return 2;
  const surroundings = checkSurroundings(config, io.env);
  if (surroundings.length > 0) {
    for (const p of surroundings) io.stderr.write(`${file}: ${p.path}: ${p.message}\n`);
    return 2;
  }
  const policies = Object.keys(config.escalation);
  io.stdout.write(
    `${file}: ok — site "${config.site.name}", ${count(config.decoders.length, 'decoder')}, ${count(config.loops.length, 'loop')}, ` +
      `${count(config.contacts.length, 'contact')}, escalation ${policies.length ? policies.join(', ') : '(built-in default)'}, ` +
      `mail ${config.mail.smtp ? `via ${config.mail.smtp.host}:${config.mail.smtp.port}` : 'to .eml files (no smtp)'}\n`,
  );
  return 0;
} });
