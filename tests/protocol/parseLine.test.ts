import { describe, expect, it } from 'vitest';
import { parseLine } from '../../src/protocol/parseLine.js';
import { MALFORMED } from './malformedLines.js';
import { refLine } from './referenceLine.js';

describe('parseLine: valid lines', () => {
  it('reads HELLO', () => {
    expect(parseLine(refLine('HELLO 1 8 fw-2.1_b'))).toEqual({ ok: true, frame: { type: 'HELLO', version: 1, loops: 8, firmware: 'fw-2.1_b' } });
  });

  it('reads EDGE at the edges of every range', () => {
    expect(parseLine(refLine('EDGE 0 0 1 N'))).toEqual({ ok: true, frame: { type: 'EDGE', seq: 0, time: 0, loop: 1, band: 'N' } });
    expect(parseLine(refLine('EDGE 65535 4294967295 64 H'))).toEqual({
      ok: true,
      frame: { type: 'EDGE', seq: 65535, time: 4294967295, loop: 64, band: 'H' },
    });
  });

  it('reads TICK with one band per loop, loop 1 first', () => {
    expect(parseLine(refLine('TICK 7 250000 NHO'))).toEqual({ ok: true, frame: { type: 'TICK', seq: 7, time: 250000, bands: ['N', 'H', 'O'] } });
    const full = parseLine(refLine(`TICK 7 1 ${'O'.repeat(64)}`));
    expect(full.ok && full.frame.type === 'TICK' && full.frame.bands.length).toBe(64);
  });

  it('reads each FAULT code the protocol names', () => {
    for (const code of ['OVERRUN', 'SUPPLY', 'RESTART'] as const) {
      expect(parseLine(refLine(`FAULT 3 99 ${code}`))).toEqual({ ok: true, frame: { type: 'FAULT', seq: 3, time: 99, code } });
    }
  });

  it('accepts the checksum in lower case and ignores one trailing CR', () => {
    expect(parseLine(refLine('EDGE 1 2 3 N', 'lower')).ok).toBe(true);
    expect(parseLine(`${refLine('EDGE 1 2 3 N')}\r`).ok).toBe(true);
  });

  it('accepts a HELLO firmware of exactly 24 characters', () => {
    expect(parseLine(refLine(`HELLO 1 64 ${'a'.repeat(24)}`)).ok).toBe(true);
  });

  it('accepts a 120-byte line as far as length goes (it fails later, not as too-long)', () => {
    const outcome = parseLine('X'.repeat(120));
    expect(outcome.ok || outcome.reason).not.toBe('too-long');
  });
});

describe('parseLine: every malformed form is dropped with its reason', () => {
  it.each(MALFORMED)('$name → $reason', ({ line, reason }) => {
    const outcome = parseLine(line);
    expect(outcome.ok).toBe(false);
    if (!outcome.ok) {
      expect(outcome.reason).toBe(reason);
      expect(outcome.detail.length).toBeGreaterThan(5);
      // Details quote the input, but stay on one printable line.
      expect(outcome.detail).toMatch(/^[\x20-\x7e…]+$/);
    }
  });

  it('names the field that is out of range', () => {
    const outcome = parseLine(refLine('EDGE 65536 2 3 N'));
    expect(outcome).toMatchObject({ ok: false, reason: 'range' });
    expect(!outcome.ok && outcome.detail).toContain('seq');
  });
});
