import type { ConfigProblem } from '../config/configError.js';

/** A scenario file that cannot be used: every problem, each with the field it concerns. */
export class ScenarioError extends Error {
  readonly code = 'PW_SCENARIO_INVALID';
  constructor(
    readonly file: string,
    readonly problems: readonly ConfigProblem[],
  ) {
    super(`${file}: ${problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message)).join('; ')}`);
    this.name = 'ScenarioError';
  }

  /** One line per problem: `path: reason`. */
  lines(): string[] {
    return this.problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message));
  }
}
