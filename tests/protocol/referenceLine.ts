import { crc16ccitt } from 'crc';

/**
 * Builds protocol lines with the checksum from the registry's general-purpose `crc` package
 * (its crc16ccitt is CRC-16/CCITT-FALSE), so tests never trust our own CRC to make their inputs.
 */
export function refLine(body: string, crcCase: 'upper' | 'lower' = 'upper'): string {
  const hex = crc16ccitt(body).toString(16).padStart(4, '0');
  return `${body}*${crcCase === 'upper' ? hex.toUpperCase() : hex}`;
}
