import { ConfigError } from '../../src/config/configError.js';
import { parseConfig } from '../../src/config/loadConfig.js';

/**
 * The lines a user would read for a refused config text, or [] when it is accepted. Any other
 * exception is a crash and fails the test. `parse` defaults to the site config's own parser.
 */
export function configProblems(text: string, fileName = 't.yaml', parse: (text: string, fileName: string) => unknown = parseConfig): string[] {
  try {
    parse(text, fileName);
  } catch (err) {
    if (err instanceof ConfigError) return err.lines();
    throw err;
  }
  return [];
}
