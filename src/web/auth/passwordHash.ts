import { randomBytes, scrypt, timingSafeEqual, type ScryptOptions } from 'node:crypto';

/**
 * Password storage with scrypt (RFC 7914) and a per-user random salt. The stored hash carries its own
 * cost parameters (`scrypt$<log2 N>$<r>$<p>$<base64 key>`) so the cost can be raised later without
 * invalidating existing passwords.
 */

export interface ScryptCost {
  log2N: number;
  r: number;
  p: number;
}

/** OWASP Password Storage Cheat Sheet's scrypt minimum: N = 2^17, r = 8, p = 1 (about 128 MiB, well under a second). */
export const DEFAULT_SCRYPT_COST: ScryptCost = { log2N: 17, r: 8, p: 1 };
const KEY_BYTES = 32;
const SALT_BYTES = 16;

export interface PasswordHash {
  hash: string;
  salt: string;
}

export function deriveScryptKey(password: string | Buffer, salt: string | Buffer, cost: ScryptCost, keyBytes: number): Promise<Buffer> {
  const N = 2 ** cost.log2N;
  const options: ScryptOptions = { N, r: cost.r, p: cost.p, maxmem: 256 * N * cost.r * cost.p + 1024 * 1024 };
  return new Promise((resolve, reject) => {
    scrypt(password, salt, keyBytes, options, (err, key) => (err ? reject(err) : resolve(key)));
  });
}

export async function hashPassword(password: string, cost: ScryptCost = DEFAULT_SCRYPT_COST): Promise<PasswordHash> {
  const salt = randomBytes(SALT_BYTES).toString('base64');
  const key = await deriveScryptKey(password.normalize('NFC'), salt, cost, KEY_BYTES);
  return { hash: `scrypt$${cost.log2N}$${cost.r}$${cost.p}$${key.toString('base64')}`, salt };
}

function parseStored(hash: string): { cost: ScryptCost; key: Buffer } | null {
  const parts = hash.split('$');
  if (parts.length !== 5 || parts[0] !== 'scrypt') return null;
  const [log2N, r, p] = parts.slice(1, 4).map(Number) as [number, number, number];
  if (![log2N, r, p].every((n) => Number.isInteger(n) && n > 0) || log2N > 24) return null;
  return { cost: { log2N, r, p }, key: Buffer.from(parts[4]!, 'base64') };
}

/** Constant-time comparison; an unreadable stored hash never matches. */
export async function verifyPassword(password: string, stored: PasswordHash): Promise<boolean> {
  const parsed = parseStored(stored.hash);
  if (!parsed || parsed.key.length === 0) return false;
  const key = await deriveScryptKey(password.normalize('NFC'), stored.salt, parsed.cost, parsed.key.length);
  return timingSafeEqual(key, parsed.key);
}

/**
 * A fixed hash to verify against when the user name is unknown, so a wrong name costs as much time as
 * a wrong password and response time does not reveal which names exist.
 */
export async function makeDecoyHash(cost: ScryptCost): Promise<PasswordHash> {
  return hashPassword(randomBytes(12).toString('base64'), cost);
}

/**
 * NIST SP 800-63B revision 4, §3.1.1.2: a password used as the only authentication factor must be at
 * least 15 characters (revision 3's §5.1.1.2 asked for 8). Web sign-in here is password only, so 15.
 * The cap bounds the hashing work.
 */
export const PASSWORD_MIN_LENGTH = 15;
export const PASSWORD_MAX_LENGTH = 256;

export function passwordProblem(password: string): string | null {
  if (password.length < PASSWORD_MIN_LENGTH) return `must be at least ${PASSWORD_MIN_LENGTH} characters`;
  if (password.length > PASSWORD_MAX_LENGTH) return `must be at most ${PASSWORD_MAX_LENGTH} characters`;
  return null;
}
