import { describe, expect, it } from 'vitest';
import { z } from 'zod';
import { parseInput } from '../../../src/web/api/parseInput.js';
import { alarmsQuerySchema } from '../../../src/web/api/apiSchemas.js';

// parseInput remembers the answer to an empty query per schema (boards poll with none). These are the
// ways that memory could lie: a query that is not empty, a schema that refuses an empty query, a second schema.
const statusOf = (thrown: () => unknown): number | undefined => {
  try {
    thrown();
  } catch (err) {
    return (err as { status?: number }).status;
  }
  return undefined;
};

describe('parseInput with an empty query', () => {
  it('gives the schema default every time, and still reads a query that is not empty', () => {
    expect(parseInput(alarmsQuerySchema, {}, 'query')).toEqual({ status: 'active' });
    expect(parseInput(alarmsQuerySchema, {}, 'query')).toEqual({ status: 'active' });
    expect(parseInput(alarmsQuerySchema, { status: 'all' }, 'query')).toEqual({ status: 'all' });
    expect(statusOf(() => parseInput(alarmsQuerySchema, { status: 'none' }, 'query'))).toBe(400);
    expect(parseInput(alarmsQuerySchema, Object.create(null), 'query')).toEqual({ status: 'active' });
  });

  it('keeps each schema its own answer, and refuses an empty query every time where one is required', () => {
    const hoursQuery = z.strictObject({ hours: z.string().default('24') });
    const required = z.strictObject({ since: z.string({ error: 'is required' }) });
    expect(parseInput(hoursQuery, {}, 'query')).toEqual({ hours: '24' });
    expect(parseInput(alarmsQuerySchema, {}, 'query')).toEqual({ status: 'active' });
    expect(statusOf(() => parseInput(required, {}, 'query'))).toBe(400);
    expect(statusOf(() => parseInput(required, {}, 'query'))).toBe(400);
  });

  it('hands back an answer no caller can change for the next one', () => {
    const first = parseInput(alarmsQuerySchema, {}, 'query') as { status: string };
    expect(() => {
      first.status = 'all';
    }).toThrow(TypeError);
    expect(parseInput(alarmsQuerySchema, {}, 'query')).toEqual({ status: 'active' });
  });
});
