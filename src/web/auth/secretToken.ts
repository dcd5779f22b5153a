import { createHash, randomBytes } from 'node:crypto';

/**
 * Random bearer secrets (API tokens, session ids, CSRF tokens) and their stored form. Only the SHA-256
 * hash is kept server-side, so a copy of the database does not hand out working credentials.
 */

export function randomSecret(bytes = 32): string {
  return randomBytes(bytes).toString('base64url');
}

export function sha256Hex(text: string): string {
  return createHash('sha256').update(text, 'utf8').digest('hex');
}

/** API tokens carry a prefix so a leaked one is recognisable in logs and secret scanners. */
export const API_TOKEN_PREFIX = 'pwt_';

export function newApiToken(): string {
  return API_TOKEN_PREFIX + randomSecret(32);
}
