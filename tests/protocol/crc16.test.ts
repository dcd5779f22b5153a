import { crc16ccitt } from 'crc';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { crc16CcittFalse, crcHex } from '../../src/protocol/crc16.js';

describe('crc16CcittFalse', () => {
  it('gives the catalogue check value for "123456789"', () => {
    // Check value 0x29B1: Greg Cook, "Catalogue of parametrised CRC algorithms", entry CRC-16/IBM-3740
    // (alias CRC-16/CCITT-FALSE): width 16, poly 0x1021, init 0xFFFF, refin/refout false, xorout 0.
    expect(crc16CcittFalse('123456789')).toBe(0x29b1);
    expect(crc16CcittFalse(new TextEncoder().encode('123456789'))).toBe(0x29b1);
  });

  it('of no bytes is the init value', () => {
    // With no input the register is never shifted: the result is init (0xFFFF) XOR xorout (0), per the
    // Rocksoft model the catalogue uses.
    expect(crc16CcittFalse('')).toBe(0xffff);
  });

  it('agrees with the registry crc package (crc16ccitt) on random bytes', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 200 }), (bytes) => {
        expect(crc16CcittFalse(bytes)).toBe(crc16ccitt(Buffer.from(bytes)));
      }),
      { numRuns: 500, seed: 20240601 },
    );
  });

  it('agrees with the crc package on random strings, ASCII and beyond (UTF-8 bytes)', () => {
    fc.assert(
      fc.property(fc.oneof(fc.string({ maxLength: 120 }), fc.string({ maxLength: 60, unit: 'binary' })), (text) => {
        expect(crc16CcittFalse(text)).toBe(crc16ccitt(text));
      }),
      { numRuns: 500, seed: 7 },
    );
  });

  it('formats as 4 upper-case hex digits', () => {
    expect(crcHex(0x29b1)).toBe('29B1');
    expect(crcHex(0x000a)).toBe('000A');
  });
});
