import { crc16ccitt } from 'crc';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { crc16CcittFalse } from '../../src/protocol/crc16.js';
import { parseLine, utf8Length } from '../../src/protocol/parseLine.js';
import { refLine } from './referenceLine.js';

/**
 * "Bad input gets a clear error naming the field": every dropped line's detail names the frame type,
 * the field and the value as received (non-printable bytes escaped), and counts as the README says.
 * Lines are built with the registry's `crc` package, never with our own CRC.
 */
const detailOf = (line: string) => {
  const outcome = parseLine(line);
  if (outcome.ok) throw new Error(`expected ${line} to be dropped`);
  return outcome;
};

describe('drop details name the frame, the field and the value', () => {
  const cases: Array<[body: string, reason: string, detail: RegExp]> = [
    ['EDGE 1 2 3', 'syntax', /^EDGE needs 4 fields \(seq time loop band\), got 3$/],
    ['TICK 1 2', 'syntax', /^TICK needs 3 fields \(seq time bands\), got 2$/],
    ['FAULT 1 2', 'syntax', /^FAULT needs 3 fields \(seq time code\), got 2$/],
    ['HELLO 1 8', 'syntax', /^HELLO needs 3 fields \(version loops firmware\), got 2$/],
    ['EDGE 65536 2 3 H', 'range', /^EDGE seq 65536 is outside 0\.\.65535$/],
    ['EDGE 1 4294967296 3 H', 'range', /^EDGE time 4294967296 is outside 0\.\.4294967295$/],
    ['EDGE 1 2 65 H', 'range', /^EDGE loop 65 is outside 1\.\.64$/],
    ['EDGE 1 2 0 H', 'range', /^EDGE loop 0 is outside 1\.\.64$/],
    ['EDGE 1 2 3 X', 'range', /^EDGE band "X" is not a band \(O, N or H\)$/],
    ['EDGE 1 2 3 h', 'syntax', /^EDGE band "h" is not one band letter$/],
    ['EDGE 01 2 3 H', 'syntax', /^EDGE seq "01" is not a plain decimal number$/],
    ['TICK 1 -2 NN', 'syntax', /^TICK time "-2" is not a plain decimal number$/],
    ['EDGE 1 1234567890123456 3 H', 'range', /^EDGE time 123456789012… is outside 0\.\.4294967295$/],
    ['EDGE 1 123456789012345 3 H', 'range', /^EDGE time 123456789012345 is outside 0\.\.4294967295$/],
    ['TICK 1 2 NNXN', 'range', /^TICK band of loop 3 "X" is not a band \(O, N or H\)$/],
    ['TICK 1 2 NN1', 'syntax', /^TICK bands "NN1" must be band letters only$/],
    ['FAULT 1 2 HOT', 'range', /^FAULT code "HOT" is not one of OVERRUN, SUPPLY, RESTART$/],
    ['FAULT 1 2 Hot', 'syntax', /^FAULT code "Hot" must be upper-case letters$/],
    ['HELLO 2 8 fw', 'range', /^HELLO version 2 is not supported/],
    ['HELLO 01 8 fw', 'syntax', /^HELLO version "01" is not a plain decimal number$/],
    // 15 digits is still a number read exactly, so it is judged as a version, not as out of range.
    ['HELLO 100000000000000 8 fw', 'range', /^HELLO version 100000000000000 is not supported/],
    // 16 digits are out of range unread, even below Number.MAX_SAFE_INTEGER: the detail shows the first 12.
    ['HELLO 1000000000000000 8 fw', 'range', /^HELLO version 100000000000… is outside 0\.\.9007199254740991$/],
    ['HELLO 1 65 fw', 'range', /^HELLO loops 65 is outside 1\.\.64$/],
    ['HELLO 1 8 fw/1', 'syntax', /^HELLO firmware "fw\/1" may only use A-Z a-z 0-9 \. _ -$/],
    ['HELLO 1 8 abcdefghijklmnopqrstuvwxy', 'range', /^HELLO firmware is 25 characters; the limit is 24$/],
    ['PING 1 2', 'unknown-type', /^unknown frame type "PING"$/],
    ['ABCDEFGHIJKLMNOPQRSTUVWXYZ 1', 'unknown-type', /^unknown frame type "ABCDEFGHIJKLMNOP"$/],
  ];
  for (const [body, reason, detail] of cases) {
    it(`${body} → ${reason}`, () => {
      const outcome = detailOf(refLine(body));
      expect(outcome.reason).toBe(reason);
      expect(outcome.detail).toMatch(detail);
    });
  }

  it('quotes control characters escaped, and only a bounded part of long garbage', () => {
    expect(detailOf('EDGE 1 2 3 H*zz\x01z').detail).toBe('checksum "zz\\x01z" is not 4 hex digits');
    expect(detailOf(refLine('EDGE 1 2 3 H')+'x').reason).toBe('syntax');
    expect(detailOf(refLine('EDGE 1 2 3 H\x7f')).detail).toBe('body contains characters other than printable ASCII');
    expect(detailOf(refLine('EDGE 1 2  3 H')).detail).toBe('fields must be separated by exactly one space');
    expect(detailOf(refLine('EDGE 1 2 3 HHHHHHHHHHHHHHHHHHHH')).detail).toBe('EDGE band "HHHHHHHHHHHHHHHH" is not one band letter');
    expect(detailOf(refLine(`TICK 1 2 ${'N'.repeat(65)}`)).detail).toBe('TICK has 65 bands; the limit is 64');
    const junk = 'abcdefghijklmnopqrstuvwxyz0123456789';
    expect(detailOf(refLine(`EDGE ${junk} 2 3 H`)).detail).toBe('EDGE seq "abcdefghijklmnop" is not a plain decimal number');
    expect(detailOf(refLine(`TICK 1 2 ${junk}`)).detail).toBe('TICK bands "abcdefghijklmnop" must be band letters only');
    expect(detailOf(refLine(`FAULT 1 2 ${junk}`)).detail).toBe('FAULT code "abcdefghijklmnop" must be upper-case letters');
    expect(detailOf(refLine(`FAULT 1 2 ${junk.slice(0, 26).toUpperCase()}`)).detail).toBe('FAULT code "ABCDEFGHIJKLMNOP" is not one of OVERRUN, SUPPLY, RESTART');
    expect(detailOf(refLine(`HELLO 1 8 ${junk}/${junk}`)).detail).toBe('HELLO firmware "abcdefghijklmnopqrstuvwxyz0123" may only use A-Z a-z 0-9 . _ -');
    expect(detailOf('*1234').reason).toBe('crc');
    expect(detailOf('1234').detail).toMatch(/does not end in \*CCCC/);
  });
});

describe('line length in UTF-8 bytes (README: a whole line is at most 120 bytes)', () => {
  it('counts like Node\'s own UTF-8 encoder (Buffer.byteLength), lone surrogates included', () => {
    fc.assert(
      fc.property(fc.string({ unit: fc.oneof(fc.constant('a'), fc.constant('é'), fc.constant('€'), fc.constant('😀'), fc.constant('\ud800'), fc.constant('\udc00'), fc.constant('\u07ff'), fc.constant('\u0800'), fc.constant('\u0080'), fc.constant('\u007f'), fc.constant('\udbff'), fc.constant('\udfff')), maxLength: 40 }), (text) => {
        expect(utf8Length(text)).toBe(Buffer.byteLength(text, 'utf8'));
      }),
      { numRuns: 2000 },
    );
    // The boundaries one by one (UTF-8, RFC 3629 section 3): U+007F one byte, U+0080 two, U+10FFFF four.
    expect(utf8Length('\u007f')).toBe(1);
    expect(utf8Length('\u0080')).toBe(2);
    expect(utf8Length('\udbff\udfff')).toBe(4);
    expect(utf8Length('a\ud800')).toBe(Buffer.byteLength('a\ud800'));
  });

  it('120 bytes pass the length check and 121 are too long, however the bytes are made up', () => {
    const ok = refLine(`HELLO 1 8 ${'a'.repeat(24)}`);
    const pad = (bytes: number, unit: string) => unit.repeat(Math.floor(bytes / Buffer.byteLength(unit)));
    for (const unit of ['x', 'é', '€', '😀']) {
      const at120 = ok + pad(120 - ok.length, 'x').slice(0, (120 - ok.length) % Buffer.byteLength(unit)) + pad(120 - ok.length - ((120 - ok.length) % Buffer.byteLength(unit)), unit);
      expect(Buffer.byteLength(at120)).toBe(120);
      expect(parseLine(at120).ok === false && (parseLine(at120) as { reason: string }).reason).not.toBe('too-long');
      const at121 = `${at120}x`;
      expect(detailOf(at121)).toEqual({ ok: false, reason: 'too-long', detail: 'line is 121 bytes; the limit is 120' });
    }
  });
});

describe('CRC-16/CCITT-FALSE of non-ASCII text is that of its UTF-8 bytes (against the crc package)', () => {
  it('matches crc16ccitt over Buffer.from(text, "utf8")', () => {
    fc.assert(
      fc.property(fc.string({ unit: 'grapheme', maxLength: 30 }), (text) => {
        expect(crc16CcittFalse(text)).toBe(crc16ccitt(Buffer.from(text, 'utf8')));
      }),
      { numRuns: 1000 },
    );
    expect(crc16CcittFalse('\u007f')).toBe(crc16ccitt(Buffer.from([0x7f])));
    expect(crc16CcittFalse('\u0080')).toBe(crc16ccitt(Buffer.from([0xc2, 0x80])));
  });
});
