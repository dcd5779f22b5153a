import { readFileSync } from 'node:fs';
import { describeIssues, plainIssueMessage } from '../config/plainIssues.js';
import { readYamlMapping } from '../config/readYaml.js';
import { ScenarioError } from './scenarioError.js';
import { scenarioSchema, type Scenario } from './scenarioSchema.js';

/** Parses scenario YAML; throws ScenarioError listing every problem by field. */
export function parseScenario(text: string, file = '<scenario>'): Scenario {
  const read = readYamlMapping(text, 'keys decoder:, loops:, events:');
  if (!read.ok) throw new ScenarioError(file, read.problems);
  const result = scenarioSchema.safeParse(read.value, { error: plainIssueMessage });
  if (!result.success) throw new ScenarioError(file, describeIssues(result.error.issues, read.value));
  return result.data;
}

/** Reads and validates a scenario file; an unreadable file is a ScenarioError too. */
export function loadScenario(file: string): Scenario {
  let text: string;
  try {
    text = readFileSync(file, 'utf8');
  } catch (err) {
    const code = (err as NodeJS.ErrnoException).code;
    const reason = code === 'ENOENT' ? 'file not found' : code === 'EACCES' ? 'permission denied' : (err as Error).message;
    throw new ScenarioError(file, [{ path: '', message: `cannot read the scenario file: ${reason}` }]);
  }
  return parseScenario(text, file);
}
