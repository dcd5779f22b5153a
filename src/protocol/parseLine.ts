import { isBand, type Band } from '../model/band.js';
import { crc16CcittFalse, crcHex } from './crc16.js';
import { FAULT_CODES, MAX_LINE_BYTES, SEQ_MODULO, TIME_MODULO, type DropReason, type FaultCode, type Frame, type ParseOutcome } from './frame.js';

/**
 * Parses one decoder protocol v1 line (without its LF; one trailing CR is ignored). Never throws:
 * every malformed form comes back as `{ ok: false, reason, detail }`.
 *
 * Strictness, so that a valid line has exactly one spelling (parse → encode gives the line back):
 * - the length limit counts the line as received, CR included, LF excluded, in bytes (UTF-8);
 * - fields are separated by exactly one space, no leading or trailing space;
 * - decimal fields are plain digits: no sign, no leading zeros ("0" itself is fine);
 * - the checksum is exactly 4 hex digits, either case.
 * Reasons: a token of the wrong shape is `syntax`; a well-shaped value outside its allowed set or
 * range is `range`; a first field that is not a known frame type is `unknown-type`.
 */
export function parseLine(line: string): ParseOutcome {
  const bytes = utf8Length(line);
  if (bytes > MAX_LINE_BYTES) return drop('too-long', `line is ${bytes} bytes; the limit is ${MAX_LINE_BYTES}`);

  const text = line.endsWith('\r') ? line.slice(0, -1) : line;
  const star = text.length - 5;
  // A line under 5 characters fails this too: charCodeAt before the start is NaN.
  if (text.charCodeAt(star) !== 0x2a /* * */) {
    return drop('syntax', 'line does not end in *CCCC (a "*" and 4 hex digits of checksum)');
  }
  const crcText = text.slice(star + 1);
  if (!HEX4.test(crcText)) return drop('syntax', `checksum "${printable(crcText)}" is not 4 hex digits`);
  const body = text.slice(0, star);
  const expected = crc16CcittFalse(body);
  const given = parseInt(crcText, 16);
  if (given !== expected) return drop('crc', `checksum ${crcText} does not match the body (computed ${crcHex(expected)})`);

  if (!PRINTABLE.test(body)) return drop('syntax', 'body contains characters other than printable ASCII');
  const fields = body.split(' ');
  if (fields.some((f) => f === '')) return drop('syntax', 'fields must be separated by exactly one space');

  const type = fields[0]!;
  switch (type) {
    case 'HELLO':
      return parseHello(fields);
    case 'EDGE':
      return parseEdge(fields);
    case 'TICK':
      return parseTick(fields);
    case 'FAULT':
      return parseFault(fields);
    default:
      return drop('unknown-type', `unknown frame type "${printable(type.slice(0, 16))}"`);
  }
}

const HEX4 = /^[0-9A-Fa-f]{4}$/;
const PRINTABLE = /^[\x20-\x7e]*$/;
const DECIMAL = /^(0|[1-9][0-9]*)$/;
const FIRMWARE = /^[A-Za-z0-9._-]+$/;
const UPPER = /^[A-Z]+$/;
const MAX_FIRMWARE_CHARS = 24;
const MAX_LOOPS = 64;

type Failure = { ok: false; reason: DropReason; detail: string };

function drop(reason: DropReason, detail: string): Failure {
  return { ok: false, reason, detail };
}

function ok(frame: Frame): ParseOutcome {
  return { ok: true, frame };
}

function fieldCount(fields: string[], want: number, shape: string): Failure | null {
  return fields.length === want ? null : drop('syntax', `${fields[0]} needs ${want - 1} fields (${shape}), got ${fields.length - 1}`);
}

/** A decimal within [min, max], or the failure naming the field. */
function decimal(type: string, name: string, text: string, min: number, max: number): number | Failure {
  if (!DECIMAL.test(text)) return drop('syntax', `${type} ${name} "${printable(text.slice(0, 16))}" is not a plain decimal number`);
  // More digits than any limit here needs: out of range without trusting float precision.
  const value = text.length > 15 ? Number.POSITIVE_INFINITY : Number(text);
  if (value < min || value > max) return drop('range', `${type} ${name} ${text.length > 15 ? `${text.slice(0, 12)}…` : text} is outside ${min}..${max}`);
  return value;
}

function seqAndTime(fields: string[]): { seq: number; time: number } | Failure {
  const type = fields[0]!;
  const seq = decimal(type, 'seq', fields[1]!, 0, SEQ_MODULO - 1);
  if (typeof seq !== 'number') return seq;
  const time = decimal(type, 'time', fields[2]!, 0, TIME_MODULO - 1);
  if (typeof time !== 'number') return time;
  return { seq, time };
}

function parseHello(fields: string[]): ParseOutcome {
  const count = fieldCount(fields, 4, 'version loops firmware');
  if (count) return count;
  const version = decimal('HELLO', 'version', fields[1]!, 0, Number.MAX_SAFE_INTEGER);
  if (typeof version !== 'number') return version;
  if (version !== 1) return drop('range', `HELLO version ${fields[1]} is not supported (this host speaks protocol version 1)`);
  const loops = decimal('HELLO', 'loops', fields[2]!, 1, MAX_LOOPS);
  if (typeof loops !== 'number') return loops;
  const firmware = fields[3]!;
  if (!FIRMWARE.test(firmware)) return drop('syntax', `HELLO firmware "${printable(firmware.slice(0, 30))}" may only use A-Z a-z 0-9 . _ -`);
  if (firmware.length > MAX_FIRMWARE_CHARS) return drop('range', `HELLO firmware is ${firmware.length} characters; the limit is ${MAX_FIRMWARE_CHARS}`);
  return ok({ type: 'HELLO', version: 1, loops, firmware });
}

function band(type: string, name: string, text: string): Band | Failure {
  if (text.length !== 1 || !UPPER.test(text)) return drop('syntax', `${type} ${name} "${printable(text.slice(0, 16))}" is not one band letter`);
  if (!isBand(text)) return drop('range', `${type} ${name} "${text}" is not a band (O, N or H)`);
  return text;
}

function parseEdge(fields: string[]): ParseOutcome {
  const count = fieldCount(fields, 5, 'seq time loop band');
  if (count) return count;
  const st = seqAndTime(fields);
  if ('ok' in st) return st;
  const loop = decimal('EDGE', 'loop', fields[3]!, 1, MAX_LOOPS);
  if (typeof loop !== 'number') return loop;
  const b = band('EDGE', 'band', fields[4]!);
  if (typeof b !== 'string') return b;
  return ok({ type: 'EDGE', seq: st.seq, time: st.time, loop, band: b });
}

function parseTick(fields: string[]): ParseOutcome {
  const count = fieldCount(fields, 4, 'seq time bands');
  if (count) return count;
  const st = seqAndTime(fields);
  if ('ok' in st) return st;
  const text = fields[3]!;
  if (!UPPER.test(text)) return drop('syntax', `TICK bands "${printable(text.slice(0, 16))}" must be band letters only`);
  if (text.length > MAX_LOOPS) return drop('range', `TICK has ${text.length} bands; the limit is ${MAX_LOOPS}`);
  const bands: Band[] = [];
  for (let i = 0; i < text.length; i++) {
    const letter = text[i]!;
    if (!isBand(letter)) return drop('range', `TICK band of loop ${i + 1} "${letter}" is not a band (O, N or H)`);
    bands.push(letter);
  }
  return ok({ type: 'TICK', seq: st.seq, time: st.time, bands });
}

function parseFault(fields: string[]): ParseOutcome {
  const count = fieldCount(fields, 4, 'seq time code');
  if (count) return count;
  const st = seqAndTime(fields);
  if ('ok' in st) return st;
  const code = fields[3]!;
  if (!UPPER.test(code)) return drop('syntax', `FAULT code "${printable(code.slice(0, 16))}" must be upper-case letters`);
  if (!(FAULT_CODES as readonly string[]).includes(code)) return drop('range', `FAULT code "${code.slice(0, 16)}" is not one of ${FAULT_CODES.join(', ')}`);
  return ok({ type: 'FAULT', seq: st.seq, time: st.time, code: code as FaultCode });
}

/** Byte length of the string's UTF-8 encoding, without allocating. */
export function utf8Length(text: string): number {
  let bytes = 0;
  for (let i = 0; i < text.length; i++) {
    const code = text.charCodeAt(i);
    if (code < 0x80) bytes += 1;
    else if (code < 0x800) bytes += 2;
    // A high surrogate last in the text reads NaN after it, which is no low surrogate: 3 bytes, as Buffer.byteLength counts it.
    else if (code >= 0xd800 && code <= 0xdbff && (text.charCodeAt(i + 1) & 0xfc00) === 0xdc00) {
      bytes += 4;
      i++;
    } else bytes += 3;
  }
  return bytes;
}

/** Details quote garbage back to the user: keep them on one readable line. */
function printable(text: string): string {
  return text.replace(/[^\x20-\x7e]/g, (c) => `\\x${c.charCodeAt(0).toString(16).padStart(2, '0')}`);
}
