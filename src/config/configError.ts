import { countOf } from '../model/plural.js';
/** One problem found in a config file: where (a path such as `loops[2].input`) and a plain reason. */
export interface ConfigProblem {
  path: string;
  message: string;
}

/** Thrown by the loader with every problem found, so the CLI can print them all and exit 2. */
export class ConfigError extends Error {
  readonly code = 'PW_CONFIG_INVALID';
  constructor(
    readonly file: string,
    readonly problems: readonly ConfigProblem[],
  ) {
    super(`${file}: ${countOf(problems.length, 'problem')} in the configuration`);
    this.name = 'ConfigError';
  }

  /** One line per problem: `path: reason`. */
  lines(): string[] {
    return this.problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message));
  }
}

export function formatPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const part of path) {
    if (typeof part === 'number') out += `[${part}]`;
    else out += out ? `.${String(part)}` : String(part);
  }
  return out;
}
