import { readFileSync } from 'node:fs';
import { LineCounter, parseDocument } from 'yaml';
import { describeIssues } from '../config/loadConfig.js';
import { ScenarioError } from './scenarioError.js';
import { scenarioSchema, type Scenario } from './scenarioSchema.js';

/** Parses scenario YAML; throws ScenarioError listing every problem by field. */
export function parseScenario(text: string, file = '<scenario>'): Scenario {
  const lineCounter = new LineCounter();
  const doc = parseDocument(text, { prettyErrors: false, uniqueKeys: true, lineCounter });
  if (doc.errors.length > 0) {
    throw new ScenarioError(
      file,
      doc.errors.map((e) => ({
        path: place(lineCounter.linePos(e.pos[0])),
        message: `YAML: ${e.message.split('\n')[0]}`,
      })),
    );
  }
  const raw: unknown = doc.toJS();
  if (raw === null || typeof raw !== 'object' || Array.isArray(raw)) {
    throw new ScenarioError(file, [{ path: '', message: 'the file must be a YAML mapping (keys decoder:, loops:, events:)' }]);
  }
  const result = scenarioSchema.safeParse(raw);
  if (!result.success) throw new ScenarioError(file, describeIssues(result.error.issues));
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

function place(pos: { line: number; col: number }): string {
  return pos.line > 0 ? `line ${pos.line}, column ${pos.col}` : '';
}
