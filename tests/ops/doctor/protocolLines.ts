import { crc16ccitt } from 'crc';

/**
 * Builds decoder protocol v1 lines independently of the code under test: the checksum comes from the
 * registry's general-purpose `crc` package, whose crc16ccitt is CRC-16/CCITT-FALSE (poly 0x1021,
 * init 0xFFFF, no reflection; its check value for "123456789" is 0x29B1 in the CRC catalogue).
 */
export function line(body: string): string {
  return `${body}*${crc16ccitt(body).toString(16).toUpperCase().padStart(4, '0')}\n`;
}

export const CATALOGUE_CHECK = { input: '123456789', crc: 0x29b1 } as const;
