import type { z } from 'zod';
import { badInput } from '../webErrors.js';

/**
 * Parses one part of a request (body, query, params) with its schema, or throws a 400 that names the
 * first field at fault and says why. An unknown key is reported by its own name.
 */
export function parseInput<S extends z.ZodType>(schema: S, value: unknown, part: 'body' | 'query' | 'params'): z.output<S> {
  const input = value === undefined && part === 'body' ? {} : value;
  // Boards poll with no query at all, thousands of times a minute: that answer never changes per schema.
  const emptyQuery = part === 'query' && isEmptyObject(input);
  if (emptyQuery && parsedEmptyQuery.has(schema)) return parsedEmptyQuery.get(schema) as z.output<S>;
  const result = schema.safeParse(input);
  if (result.success) {
    if (emptyQuery) parsedEmptyQuery.set(schema, Object.freeze(result.data));
    return result.data;
  }
  const issue = result.error.issues[0]!;
  if (issue.code === 'unrecognized_keys') throw badInput(issue.keys[0] ?? part, 'is not a field this request takes');
  const field = issue.path.length > 0 ? issue.path.map(String).join('.') : part;
  throw badInput(field, reasonFor(issue, valueAt(input, issue.path)));
}

const parsedEmptyQuery = new WeakMap<z.ZodType, unknown>();

function isEmptyObject(value: unknown): boolean {
  if (value === null || typeof value !== 'object') return false;
  for (const _ in value) return false;
  return true;
}

/** zod does not keep the offending input on its issues; look it up to tell "missing" from "wrong". */
function valueAt(input: unknown, path: readonly PropertyKey[]): { present: boolean; value: unknown } {
  let current: unknown = input;
  for (const key of path) {
    if (current === null || typeof current !== 'object' || !Object.hasOwn(current, key)) return { present: false, value: undefined };
    current = (current as Record<PropertyKey, unknown>)[key];
  }
  return { present: current !== undefined, value: current };
}

function reasonFor(issue: z.core.$ZodIssue, at: { present: boolean; value: unknown }): string {
  if (issue.code === 'invalid_type') {
    if (!at.present) return issue.message.startsWith('is required') ? issue.message : 'is required';
    if (Array.isArray(at.value) && issue.expected !== 'array') return 'must be given only once';
  }
  // zod's stock wording ("Invalid input: expected …") is for developers; our schemas carry their own.
  return issue.message.startsWith('Invalid input') ? 'is not valid here' : issue.message;
}
