/**
 * CRC-16/CCITT-FALSE (also catalogued as CRC-16/IBM-3740): poly 0x1021, init 0xFFFF, no reflection,
 * xorout 0. The decoder protocol checksums each line body with it.
 */
const TABLE = buildTable();

function buildTable(): Uint16Array {
  const table = new Uint16Array(256);
  for (let byte = 0; byte < 256; byte++) {
    let crc = byte << 8;
    for (let bit = 0; bit < 8; bit++) crc = crc & 0x8000 ? ((crc << 1) ^ 0x1021) & 0xffff : (crc << 1) & 0xffff;
    table[byte] = crc;
  }
  return table;
}

const utf8 = new TextEncoder();

/** Strings are checksummed as their UTF-8 bytes (protocol lines are ASCII, where that is one byte a character). */
export function crc16CcittFalse(data: string | Uint8Array): number {
  let crc = 0xffff;
  if (typeof data === 'string') {
    // Fast path for ASCII, which is every valid line; anything else goes through the encoder.
    for (let i = 0; i < data.length; i++) {
      const code = data.charCodeAt(i);
      // Stryker disable next-line ConditionalExpression,EqualityOperator: only the fast path; the encoder gives ASCII (0x7f included) the same one byte
      if (code > 0x7f) return crc16CcittFalse(utf8.encode(data));
      crc = ((crc << 8) & 0xffff) ^ TABLE[((crc >> 8) ^ code) & 0xff]!;
    }
    return crc;
  }
  for (let i = 0; i < data.length; i++) crc = ((crc << 8) & 0xffff) ^ TABLE[((crc >> 8) ^ data[i]!) & 0xff]!;
  return crc;
}

/** The four upper-case hex digits the protocol writes after `*`. */
export function crcHex(crc: number): string {
  return crc.toString(16).toUpperCase().padStart(4, '0');
}
