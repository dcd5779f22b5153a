import { existsSync } from 'node:fs';
import { ConfigError } from '../config/configError.js';
import { loadConfig } from '../config/loadConfig.js';
import type { SiteConfig } from '../config/schema.js';
import type { CliIo } from './cliTypes.js';

export const DEFAULT_CONFIG_PATH = 'config/site.yaml';

/**
 * Loads a config for a command; on failure prints one line per problem and returns null (exit 2).
 * A missing default file is the first thing a new user meets, so it says how to make one.
 */
export function loadConfigForCli(file: string, io: CliIo): SiteConfig | null {
  try {
    return loadConfig(file);
  } catch (err) {
    if (err instanceof ConfigError) {
      for (const line of err.lines()) io.stderr.write(`${file}: ${line}\n`);
      if (file === DEFAULT_CONFIG_PATH && !existsSync(file)) {
        io.stderr.write(
          `  No config given, and ${DEFAULT_CONFIG_PATH} does not exist. Start from the example: cp config/example.yaml ${DEFAULT_CONFIG_PATH}\n` +
            '  and edit it (see "Configuration reference" in README.md), or give a file: --config FILE. Just looking? Try: npx pairwatch demo\n',
        );
      }
      return null;
    }
    throw err;
  }
}
