import { ConfigError } from '../../config/configError.js';
import type { SiteConfig } from '../../config/schema.js';
import type { CheckResult } from './checkResult.js';
import { failed, passed } from './checkResult.js';

export interface ConfigCheckOutcome {
  result: CheckResult;
  /** Present when the file is valid; the other checks need it. */
  config?: SiteConfig;
}

/** Loads the site config; every problem the loader reports appears in the finding, one per line. */
export function checkConfig(file: string, load: (file: string) => SiteConfig): ConfigCheckOutcome {
  try {
    const config = load(file);
    const loops = config.loops.length;
    const decoders = config.decoders.length;
    return {
      result: passed('config', `${file} is valid (${decoders} decoder${decoders === 1 ? '' : 's'}, ${loops} loop${loops === 1 ? '' : 's'})`),
      config,
    };
  } catch (err) {
    if (err instanceof ConfigError) {
      const lines = err.lines();
      return {
        result: failed(
          'config',
          `${file} has ${lines.length} problem${lines.length === 1 ? '' : 's'}:\n        ${lines.join('\n        ')}`,
          `edit ${file} and correct each line above; \`pairwatch check-config ${file}\` re-checks it`,
        ),
      };
    }
    return { result: failed('config', `${file} could not be checked: ${(err as Error).message}`, 'run `pairwatch check-config` on it') };
  }
}
