import type { Frame } from './frame.js';
import { crc16CcittFalse, crcHex } from './crc16.js';

/** `BODY*CCCC` without the line feed: the line as `parseLine` receives it. */
export function sealBody(body: string): string {
  return `${body}*${crcHex(crc16CcittFalse(body))}`;
}

/** A complete protocol line, `BODY*CCCC\n`, as the decoder puts it on the wire. */
export function encodeLine(body: string): string {
  return `${sealBody(body)}\n`;
}

/** The body of a frame in canonical form: single spaces, plain decimals. */
export function frameBody(frame: Frame): string {
  switch (frame.type) {
    case 'HELLO':
      return `HELLO ${frame.version} ${frame.loops} ${frame.firmware}`;
    case 'EDGE':
      return `EDGE ${frame.seq} ${frame.time} ${frame.loop} ${frame.band}`;
    case 'TICK':
      return `TICK ${frame.seq} ${frame.time} ${frame.bands.join('')}`;
    case 'FAULT':
      return `FAULT ${frame.seq} ${frame.time} ${frame.code}`;
  }
}

export function encodeFrame(frame: Frame): string {
  return encodeLine(frameBody(frame));
}
