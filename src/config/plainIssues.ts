import type { z } from 'zod';
import { formatPath, type ConfigProblem } from './configError.js';

/**
 * Plain reasons for schema problems, for the config and scenario files. Users never read the schema
 * library's stock wording: `plainIssueMessage` is passed as the per-parse error map, so every check
 * without its own message (whoever adds the key) gets a plain one; checks with their own message keep it.
 * `describeIssues` then looks at the raw value at each issue's path — zod 4 does not keep the input
 * in the issue — so a key that is present but of the wrong type is reported as what was expected
 * and what was found, and only a truly missing key is "is required".
 */

type RawIssue = z.core.$ZodRawIssue;

const EXPECTED: Record<string, string> = {
  number: 'must be a number',
  int: 'must be a whole number',
  string: 'must be text',
  boolean: 'must be true or false',
  array: 'must be a list (lines starting with "- ", or [a, b])',
  object: 'must be a mapping of keys (key: value)',
  date: 'must be a date',
};

const FORMATS: Record<string, string> = {
  email: 'must be an email address such as office@example.org',
  url: 'must be a full URL such as https://monitor.example.org',
  regex: 'is not in the expected form',
};

function amount(origin: string, n: number | bigint): string {
  if (origin === 'string') return `${n} character${n === 1 ? '' : 's'}`;
  if (origin === 'array' || origin === 'set') return `${n} entr${n === 1 ? 'y' : 'ies'}`;
  return String(n);
}

/** The per-parse error map: a plain reason for every kind of issue the schema can raise. */
export function plainIssueMessage(issue: RawIssue): string {
  switch (issue.code) {
    case 'invalid_type':
      if (issue.input === undefined) return 'is required';
      return EXPECTED[issue.expected] ?? `must be ${issue.expected}`;
    case 'too_small': {
      const min = issue.minimum as number;
      if ((issue.origin === 'array' || issue.origin === 'set') && min === 1) return 'must list at least one entry';
      if (issue.origin === 'string' && min === 1) return 'must not be empty';
      return issue.inclusive === false ? `must be above ${amount(issue.origin, min)}` : `must be at least ${amount(issue.origin, min)}`;
    }
    case 'too_big': {
      const max = issue.maximum as number;
      return issue.inclusive === false ? `must be below ${amount(issue.origin, max)}` : `must be at most ${amount(issue.origin, max)}`;
    }
    case 'invalid_format':
      return FORMATS[issue.format] ?? `must be a valid ${issue.format}`;
    case 'not_multiple_of':
      return `must be a multiple of ${String(issue.divisor)}`;
    case 'invalid_value':
      return issue.values.length === 1 ? `must be ${JSON.stringify(issue.values[0])}` : `must be one of ${issue.values.map((v) => JSON.stringify(v)).join(', ')}`;
    case 'invalid_union':
      return 'is not in any of the accepted forms';
    case 'invalid_key':
      return 'has a key that is not allowed here';
    case 'invalid_element':
      return 'has an entry that is not allowed here';
    case 'unrecognized_keys':
      return 'unknown key';
    default:
      return 'is not valid here';
  }
}

/** What was written, as a person would say it: `the text "2"`, `1.5`, `a list`, `.nan (not a number)`. */
export function describeValue(value: unknown): string {
  if (value === null) return 'empty';
  if (typeof value === 'string') return `the text "${value.length > 40 ? `${value.slice(0, 40)}…` : value}"`;
  if (typeof value === 'number') {
    if (Number.isNaN(value)) return '.nan (not a number)';
    if (!Number.isFinite(value)) return value > 0 ? '.inf (infinity)' : '-.inf (minus infinity)';
    return String(value);
  }
  if (typeof value === 'boolean') return String(value);
  if (Array.isArray(value)) return 'a list';
  if (typeof value === 'object') return 'a mapping';
  return typeof value;
}

type Lookup = { present: false } | { present: true; value: unknown };

/** The raw value at an issue's path, and whether the key is there at all. */
export function rawValueAt(raw: unknown, path: readonly PropertyKey[]): Lookup {
  let here: unknown = raw;
  for (const key of path) {
    if (here === null || typeof here !== 'object') return { present: false };
    const container = here as Record<PropertyKey, unknown>;
    if (!Object.prototype.hasOwnProperty.call(container, key)) return { present: false };
    here = container[key];
  }
  return { present: true, value: here };
}

const SAYS_WHAT_WAS_FOUND = new Set(['invalid_type', 'invalid_union', 'too_small', 'too_big', 'invalid_value']);

/** Turns zod issues into one plain line each, naming the field and, when it helps, what was found there. */
export function describeIssues(issues: readonly z.core.$ZodIssue[], raw: unknown): ConfigProblem[] {
  const problems: ConfigProblem[] = [];
  for (const issue of issues) {
    const path = formatPath(issue.path);
    if (issue.code === 'unrecognized_keys') {
      for (const key of issue.keys) problems.push({ path: path ? `${path}.${key}` : key, message: 'unknown key' });
      continue;
    }
    const found = rawValueAt(raw, issue.path);
    if (!found.present || found.value === undefined) {
      problems.push({ path, message: issue.code === 'invalid_type' || issue.code === 'invalid_union' ? 'is required' : issue.message });
      continue;
    }
    const message = issue.message === 'is required' ? plainIssueMessage({ ...issue, input: found.value } as RawIssue) : issue.message;
    const sayFound = SAYS_WHAT_WAS_FOUND.has(issue.code) && !(typeof found.value === 'object' && (issue.code === 'too_small' || issue.code === 'too_big'));
    problems.push({ path, message: sayFound ? `${message}, not ${describeValue(found.value)}` : message });
  }
  return problems;
}
