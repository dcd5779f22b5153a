import { describe, expect, it } from 'vitest';
import { csvField, csvLine } from '../../../src/web/pages/csv.js';

describe('CSV (RFC 4180 §2)', () => {
  it('ends records with CRLF and leaves plain fields alone (rule 1, 4)', () => {
    expect(csvLine(['aaa', 'bbb', 'ccc'])).toBe('aaa,bbb,ccc\r\n');
  });

  it('quotes fields with commas, quotes or line breaks, doubling quotes (rules 6, 7)', () => {
    expect(csvField('b,c')).toBe('"b,c"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField('two\r\nlines')).toBe('"two\r\nlines"');
    expect(csvField(null)).toBe('');
  });

  it('defuses cells a spreadsheet would run as formulas (OWASP CSV Injection)', () => {
    for (const cell of ['=1+1', '+1', '-1', '@SUM(A1)']) expect(csvField(cell).startsWith("'")).toBe(true);
  });
});
