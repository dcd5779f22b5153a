import { crc16ccitt } from 'crc';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { frameBody } from '../../src/protocol/encodeLine.js';
import { DROP_REASONS } from '../../src/protocol/frame.js';
import { parseLine } from '../../src/protocol/parseLine.js';
import { refLine } from './referenceLine.js';

const band = fc.constantFrom('O', 'N', 'H');
const validBody = fc.oneof(
  fc.record({ loops: fc.integer({ min: 1, max: 64 }), fw: fc.stringMatching(/^[A-Za-z0-9._-]{1,24}$/) }).map(({ loops, fw }) => `HELLO 1 ${loops} ${fw}`),
  fc
    .tuple(fc.integer({ min: 0, max: 65535 }), fc.integer({ min: 0, max: 4294967295 }), fc.integer({ min: 1, max: 64 }), band)
    .map(([s, t, l, b]) => `EDGE ${s} ${t} ${l} ${b}`),
  fc
    .tuple(fc.integer({ min: 0, max: 65535 }), fc.integer({ min: 0, max: 4294967295 }), fc.array(band, { minLength: 1, maxLength: 64 }))
    .map(([s, t, bs]) => `TICK ${s} ${t} ${bs.join('')}`),
  fc
    .tuple(fc.integer({ min: 0, max: 65535 }), fc.integer({ min: 0, max: 4294967295 }), fc.constantFrom('OVERRUN', 'SUPPLY', 'RESTART'))
    .map(([s, t, c]) => `FAULT ${s} ${t} ${c}`),
);

/** One edit of a valid line: replace, insert or delete a character, using protocol-ish characters. */
const mutation = fc.record({
  kind: fc.constantFrom('replace', 'insert', 'delete'),
  at: fc.nat(),
  char: fc.constantFrom(...'0123456789 ONHXEDGTICKFAULT*+-.\r\nabcfé\u0000'.split('')),
});

function mutate(line: string, m: { kind: string; at: number; char: string }): string {
  const at = m.at % (line.length + 1);
  if (m.kind === 'insert') return line.slice(0, at) + m.char + line.slice(at);
  const i = Math.min(at, line.length - 1);
  if (m.kind === 'delete') return line.slice(0, i) + line.slice(i + 1);
  return line.slice(0, i) + m.char + line.slice(i + 1);
}

describe('parseLine properties', () => {
  it('never throws on random bytes, and every failure has a known reason', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 200 }), (bytes) => {
        const outcome = parseLine(Buffer.from(bytes).toString('latin1'));
        if (!outcome.ok) expect(DROP_REASONS).toContain(outcome.reason);
      }),
      { numRuns: 2000, seed: 11 },
    );
  });

  it('never throws on random strings of any characters', () => {
    fc.assert(
      fc.property(fc.string({ maxLength: 150, unit: 'binary' }), (text) => {
        parseLine(text);
      }),
      { numRuns: 2000, seed: 12 },
    );
  });

  it('reads back every valid line exactly', () => {
    fc.assert(
      fc.property(validBody, (body) => {
        const outcome = parseLine(refLine(body));
        expect(outcome.ok).toBe(true);
        if (outcome.ok) expect(frameBody(outcome.frame)).toBe(body);
      }),
      { numRuns: 1000, seed: 13 },
    );
  });

  it('a mutated valid line either means exactly what it now says or is dropped', () => {
    fc.assert(
      fc.property(validBody, fc.array(mutation, { minLength: 1, maxLength: 3 }), fc.boolean(), (body, mutations, fixCrc) => {
        // Mutating the whole line mostly breaks the checksum; re-sealing the mutated body (with the
        // reference crc package) exercises the body checks behind it.
        let line = refLine(body);
        for (const m of mutations) line = mutate(line, m);
        if (fixCrc) {
          const mutatedBody = mutate(body, mutations[0]!);
          line = refLine(mutatedBody);
        }
        const outcome = parseLine(line);
        if (!outcome.ok) {
          expect(DROP_REASONS).toContain(outcome.reason);
          return;
        }
        // Accepted: the line must be the canonical spelling of the frame, with a checksum the
        // reference library agrees with.
        const text = line.endsWith('\r') ? line.slice(0, -1) : line;
        const star = text.length - 5;
        const acceptedBody = text.slice(0, star);
        expect(frameBody(outcome.frame)).toBe(acceptedBody);
        expect(parseInt(text.slice(star + 1), 16)).toBe(crc16ccitt(acceptedBody));
      }),
      { numRuns: 3000, seed: 14 },
    );
  });
});
