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

describe('free text: control characters that trim() would cut are refused, not cut (src/web/http/freeText.ts)', () => {
  // VT (U+000B) and FF (U+000C) are Unicode category Cc and also JavaScript white space (ECMA-262, WhiteSpace).
  it('in an API note and in a form reason', async () => {
    const { ackBodySchema } = await import('../../../src/web/api/apiSchemas.js');
    const { freeTextField } = await import('../../../src/web/http/formFields.js');
    for (const text of ['\u000b', '\u000c', 'on my way\u000b', '\u000c ok']) {
      expect(statusOf(() => parseInput(ackBodySchema, { note: text }, 'body'))).toBe(400);
      expect(statusOf(() => freeTextField({ reason: text }, 'reason'))).toBe(400);
    }
    // Line breaks and tabs are folded to spaces and the ends trimmed, as before.
    expect(parseInput(ackBodySchema, { note: '  on my way\n ' }, 'body')).toEqual({ note: 'on my way' });
    expect(freeTextField({ reason: ' \t heater being fitted\r\n' }, 'reason')).toBe('heater being fitted');
  });
});
