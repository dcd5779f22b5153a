import { parseArgs } from 'node:util';
import type { CliCommand } from './cliTypes.js';
import { DEFAULT_CONFIG_PATH, loadConfigForCli } from './loadConfigForCli.js';

/** `pairwatch check-config [FILE]`: validates a site config and prints every problem, one per line. */
export const checkConfigCommand: CliCommand = async (argv, io) => {
  const { positionals, values } = parseArgs({ args: argv, allowPositionals: true, options: { config: { type: 'string' } } });
  const file = positionals[0] ?? values.config ?? DEFAULT_CONFIG_PATH;
  const config = loadConfigForCli(file, io);
  if (!config) return 2;
  const policies = Object.keys(config.escalation);
  io.stdout.write(
    `${file}: ok — site "${config.site.name}", ${config.decoders.length} decoder(s), ${config.loops.length} loop(s), ` +
      `${config.contacts.length} contact(s), escalation ${policies.length ? policies.join(', ') : '(built-in default)'}, ` +
      `mail ${config.mail.smtp ? `via ${config.mail.smtp.host}:${config.mail.smtp.port}` : 'to .eml files (no smtp)'}\n`,
  );
  return 0;
};
