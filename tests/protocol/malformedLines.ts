import type { DropReason } from '../../src/protocol/frame.js';
import { refLine } from './referenceLine.js';

/** Every malformed form the protocol v1 section names, each with the reason it must be dropped for. */
export const MALFORMED: ReadonlyArray<{ name: string; line: string; reason: DropReason }> = [
  // Length: at most 120 bytes, counted as received (CR included, LF not part of the line).
  { name: '121 bytes', line: 'X'.repeat(121), reason: 'too-long' },
  { name: '120 bytes plus a CR', line: `${'X'.repeat(120)}\r`, reason: 'too-long' },
  { name: '61 two-byte characters (122 bytes, 61 chars)', line: 'é'.repeat(61), reason: 'too-long' },
  // Checksum framing.
  { name: 'no checksum at all', line: 'EDGE 1 2 3 N', reason: 'syntax' },
  { name: 'empty line', line: '', reason: 'syntax' },
  { name: 'checksum of 3 digits', line: 'EDGE 1 2 3 N*12A', reason: 'syntax' },
  { name: 'checksum of 5 digits', line: 'EDGE 1 2 3 N*12A45', reason: 'syntax' },
  { name: 'checksum not hex', line: 'EDGE 1 2 3 N*12G4', reason: 'syntax' },
  { name: 'two CRs at the end', line: `${refLine('EDGE 1 2 3 N')}\r\r`, reason: 'syntax' },
  { name: 'a space slipped in before the checksum', line: refLine('EDGE 1 2 3 N').replace('*', ' *'), reason: 'crc' },
  { name: 'wrong checksum', line: wrongCrc('EDGE 1 2 3 N'), reason: 'crc' },
  { name: 'body changed after checksumming', line: refLine('EDGE 1 2 3 N').replace(' N*', ' H*'), reason: 'crc' },
  // Body syntax (checksums right, so only the body is at fault).
  { name: 'tab separator', line: refLine('EDGE 1 2 3\tN'), reason: 'syntax' },
  { name: 'NUL in body', line: refLine('EDGE 1 2 3 N\u0000'), reason: 'syntax' },
  { name: 'two spaces', line: refLine('EDGE 1  2 3 N'), reason: 'syntax' },
  { name: 'leading space', line: refLine(' EDGE 1 2 3 N'), reason: 'syntax' },
  { name: 'trailing space', line: refLine('EDGE 1 2 3 N '), reason: 'syntax' },
  { name: 'empty body', line: refLine(''), reason: 'syntax' },
  { name: 'EDGE with a field missing', line: refLine('EDGE 1 2 N'), reason: 'syntax' },
  { name: 'EDGE with a field extra', line: refLine('EDGE 1 2 3 N 5'), reason: 'syntax' },
  { name: 'HELLO with a field missing', line: refLine('HELLO 1 8'), reason: 'syntax' },
  { name: 'TICK with a field extra', line: refLine('TICK 1 2 NN X'), reason: 'syntax' },
  { name: 'FAULT with a field missing', line: refLine('FAULT 1 SUPPLY'), reason: 'syntax' },
  { name: 'seq with a plus sign', line: refLine('EDGE +1 2 3 N'), reason: 'syntax' },
  { name: 'seq negative', line: refLine('EDGE -1 2 3 N'), reason: 'syntax' },
  { name: 'seq with a leading zero', line: refLine('EDGE 01 2 3 N'), reason: 'syntax' },
  { name: 'time with a decimal point', line: refLine('EDGE 1 2.0 3 N'), reason: 'syntax' },
  { name: 'time in exponent form', line: refLine('EDGE 1 2e3 3 N'), reason: 'syntax' },
  { name: 'time in hex', line: refLine('TICK 1 0x10 NN'), reason: 'syntax' },
  { name: 'loop not a number', line: refLine('EDGE 1 2 three N'), reason: 'syntax' },
  { name: 'band lower case', line: refLine('EDGE 1 2 3 n'), reason: 'syntax' },
  { name: 'band two letters', line: refLine('EDGE 1 2 3 NN'), reason: 'syntax' },
  { name: 'band a digit', line: refLine('EDGE 1 2 3 0'), reason: 'syntax' },
  { name: 'TICK bands with lower case', line: refLine('TICK 1 2 NnN'), reason: 'syntax' },
  { name: 'firmware with a slash', line: refLine('HELLO 1 8 fw/1'), reason: 'syntax' },
  { name: 'FAULT code lower case', line: refLine('FAULT 1 2 overrun'), reason: 'syntax' },
  { name: 'version with a leading zero', line: refLine('HELLO 01 8 fw'), reason: 'syntax' },
  // Unknown frame types.
  { name: 'unknown type', line: refLine('PING 1 2'), reason: 'unknown-type' },
  { name: 'type in lower case', line: refLine('edge 1 2 3 N'), reason: 'unknown-type' },
  // Out of range.
  { name: 'seq 65536', line: refLine('EDGE 65536 2 3 N'), reason: 'range' },
  { name: 'time 4294967296', line: refLine('EDGE 1 4294967296 3 N'), reason: 'range' },
  { name: 'time with 20 digits', line: refLine('EDGE 1 99999999999999999999 3 N'), reason: 'range' },
  { name: 'loop 0', line: refLine('EDGE 1 2 0 N'), reason: 'range' },
  { name: 'loop 65', line: refLine('EDGE 1 2 65 N'), reason: 'range' },
  { name: 'band letter not a band', line: refLine('EDGE 1 2 3 X'), reason: 'range' },
  { name: 'TICK band letter not a band', line: refLine('TICK 1 2 NXN'), reason: 'range' },
  { name: 'TICK with 65 bands', line: refLine(`TICK 1 2 ${'N'.repeat(65)}`), reason: 'range' },
  { name: 'HELLO version 2', line: refLine('HELLO 2 8 fw'), reason: 'range' },
  { name: 'HELLO version 0', line: refLine('HELLO 0 8 fw'), reason: 'range' },
  { name: 'HELLO 0 loops', line: refLine('HELLO 1 0 fw'), reason: 'range' },
  { name: 'HELLO 65 loops', line: refLine('HELLO 1 65 fw'), reason: 'range' },
  { name: 'HELLO firmware of 25 characters', line: refLine(`HELLO 1 8 ${'f'.repeat(25)}`), reason: 'range' },
  { name: 'FAULT code unknown', line: refLine('FAULT 1 2 PANIC'), reason: 'range' },
];

function wrongCrc(body: string): string {
  const good = refLine(body);
  const hex = parseInt(good.slice(-4), 16);
  return `${body}*${((hex ^ 0x0001) & 0xffff).toString(16).toUpperCase().padStart(4, '0')}`;
}
