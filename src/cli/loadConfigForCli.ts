import { ConfigError } from '../config/configError.js';
import { loadConfig } from '../config/loadConfig.js';
import type { SiteConfig } from '../config/schema.js';
import type { CliIo } from './cliTypes.js';

export const DEFAULT_CONFIG_PATH = 'config/site.yaml';

/** Loads a config for a command; on failure prints one line per problem and returns null (exit 2). */
export function loadConfigForCli(file: string, io: CliIo): SiteConfig | null {
  try {
    return loadConfig(file);
  } catch (err) {
    if (err instanceof ConfigError) {
      for (const line of err.lines()) io.stderr.write(`${file}: ${line}\n`);
      return null;
    }
    throw err;
  }
}
