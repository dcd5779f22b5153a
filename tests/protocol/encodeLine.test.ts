import { crc16ccitt } from 'crc';
import { describe, expect, it } from 'vitest';
import { encodeFrame, encodeLine, frameBody, sealBody } from '../../src/protocol/encodeLine.js';
import { refLine } from './referenceLine.js';

describe('encodeLine', () => {
  it('appends *CCCC and LF, CCCC being CRC-16/CCITT-FALSE of the body in upper-case hex', () => {
    // "123456789" has the catalogue check value 0x29B1 (Catalogue of parametrised CRC algorithms, CRC-16/IBM-3740).
    expect(encodeLine('123456789')).toBe('123456789*29B1\n');
    expect(sealBody('123456789')).toBe('123456789*29B1');
  });

  it('matches the crc package for a frame body', () => {
    const body = 'EDGE 17 4000123 3 H';
    const hex = crc16ccitt(body).toString(16).toUpperCase().padStart(4, '0');
    expect(encodeLine(body)).toBe(`${body}*${hex}\n`);
  });

  it('writes each frame type in its protocol v1 form', () => {
    expect(frameBody({ type: 'HELLO', version: 1, loops: 8, firmware: 'fw-2.1' })).toBe('HELLO 1 8 fw-2.1');
    expect(frameBody({ type: 'EDGE', seq: 0, time: 4294967295, loop: 64, band: 'O' })).toBe('EDGE 0 4294967295 64 O');
    expect(frameBody({ type: 'TICK', seq: 65535, time: 12, bands: ['N', 'H', 'O'] })).toBe('TICK 65535 12 NHO');
    expect(frameBody({ type: 'FAULT', seq: 9, time: 5, code: 'SUPPLY' })).toBe('FAULT 9 5 SUPPLY');
    expect(encodeFrame({ type: 'FAULT', seq: 9, time: 5, code: 'SUPPLY' })).toBe(`${refLine('FAULT 9 5 SUPPLY')}\n`);
  });
});
