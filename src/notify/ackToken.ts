import { createHmac, randomBytes, timingSafeEqual } from 'node:crypto';

/**
 * Signed acknowledge-link tokens. A token names one alarm, the contact it was mailed to, an expiry and
 * a single-use id, and is signed with HMAC-SHA256 (RFC 2104, FIPS 198-1) under the site's secret. Every
 * character is from RFC 3986's unreserved set, so the token sits in a URL path without escaping.
 *
 * Layout: `a2.<alarmId>.<contactId>.<expiresAt epoch ms>.<tokenId>.<base64url MAC>`. Links of the
 * earlier layout `a1.<alarmId>.<expiresAt>.<tokenId>.<MAC>` (no contact) still in mailboxes keep working
 * until they expire; they verify with `contactId: null`.
 */
const TOKEN_VERSION = 'a2';
const OLD_VERSION = 'a1';
/** The config's contact id rule: never a dot, all RFC 3986 unreserved. */
const CONTACT_ID_RE = /^[a-z0-9][a-z0-9_-]{0,39}$/;
const MAC_LABEL = 'pairwatch-ack';
const MAC_BYTES = 32;
const TOKEN_ID_RE = /^[A-Za-z0-9_-]{8,64}$/;
const ALARM_ID_RE = /^[1-9]\d{0,15}$/;
const EXPIRES_RE = /^\d{1,16}$/;
const MAC_RE = /^[A-Za-z0-9_-]{43}$/;

export interface AckTokenClaims {
  alarmId: number;
  /** The contact the link was mailed to; their name is recorded as who acknowledged. */
  contactId: string;
  expiresAt: number;
  tokenId: string;
}

export type AckTokenCheck =
  | { ok: true; alarmId: number; contactId: string | null; tokenId: string; expiresAt: number }
  | { ok: false; reason: 'malformed' | 'forged' | 'expired' };

/** A fresh single-use id: 128 random bits, base64url. */
export function newAckTokenId(): string {
  return randomBytes(16).toString('base64url');
}

/** The MAC over a token's signed part. Exported so tests can hold it against the RFC 4231 vectors. */
export function computeAckMac(payload: string, secret: Buffer): Buffer {
  // Stryker disable next-line StringLiteral: UTF-8 is also Node's default for a string; named so the RFC 4231 vectors read as bytes
  return createHmac('sha256', secret).update(payload, 'utf8').digest();
}

function signedPart(alarmId: number, contactId: string | null, expiresAt: number, tokenId: string): string {
  return contactId === null ? `${OLD_VERSION}.${alarmId}.${expiresAt}.${tokenId}` : `${TOKEN_VERSION}.${alarmId}.${contactId}.${expiresAt}.${tokenId}`;
}

function macInput(part: string): string {
  // A label keeps this MAC from ever matching one the same secret might sign for another purpose.
  return `${MAC_LABEL}:${part}`;
}

export function signAckToken(claims: AckTokenClaims, secret: Buffer): string {
  const { alarmId, contactId, expiresAt, tokenId } = claims;
  if (!Number.isSafeInteger(alarmId) || alarmId < 1) throw new RangeError(`alarmId must be a positive integer, got ${alarmId}`);
  if (!Number.isSafeInteger(expiresAt) || expiresAt < 0) throw new RangeError(`expiresAt must be epoch milliseconds, got ${expiresAt}`);
  if (!TOKEN_ID_RE.test(tokenId)) throw new RangeError('tokenId must be 8–64 characters of A-Z a-z 0-9 _ -');
  if (!CONTACT_ID_RE.test(contactId)) throw new RangeError(`contactId must be a config contact id, got ${JSON.stringify(contactId)}`);
  const part = signedPart(alarmId, contactId, expiresAt, tokenId);
  return `${part}.${computeAckMac(macInput(part), secret).toString('base64url')}`;
}

/**
 * Checks shape, then signature (constant-time), then expiry — in that order, so an unsigned token
 * learns nothing about expiry. Whether the token was already used is the caller's (ackTokenRepo).
 */
export function verifyAckToken(token: string, secret: Buffer, now: number): AckTokenCheck {
  if (typeof token !== 'string') return { ok: false, reason: 'malformed' };
  // Stryker disable next-line all: no well-formed token comes near 200 characters (186 at most); this only bounds the work spent on junk
  if (token.length > 200) return { ok: false, reason: 'malformed' };
  const parts = token.split('.');
  let contactId: string | null = null;
  if (parts.length === 6 && parts[0] === TOKEN_VERSION) {
    contactId = parts.splice(2, 1)[0]!;
    if (!CONTACT_ID_RE.test(contactId)) return { ok: false, reason: 'malformed' };
  } else if (parts.length !== 5 || parts[0] !== OLD_VERSION) return { ok: false, reason: 'malformed' };
  const [, alarmText, expiresText, tokenId, macText] = parts as [string, string, string, string, string];
  if (
    !ALARM_ID_RE.test(alarmText) ||
    !EXPIRES_RE.test(expiresText) ||
    !TOKEN_ID_RE.test(tokenId) ||
    !MAC_RE.test(macText)
  ) {
    return { ok: false, reason: 'malformed' };
  }
  const alarmId = Number(alarmText);
  const expiresAt = Number(expiresText);
  if (!Number.isSafeInteger(alarmId) || !Number.isSafeInteger(expiresAt)) return { ok: false, reason: 'malformed' };

  const expected = computeAckMac(macInput(signedPart(alarmId, contactId, expiresAt, tokenId)), secret);
  const given = Buffer.from(macText, 'base64url');
  // Stryker disable next-line all: MAC_RE admits exactly 43 characters, always 32 bytes; kept because timingSafeEqual throws on unequal lengths
  if (given.length !== MAC_BYTES) return { ok: false, reason: 'forged' };
  // Re-encoding guards against non-canonical base64url spellings of the same bytes.
  if (given.toString('base64url') !== macText || !timingSafeEqual(given, expected)) {
    return { ok: false, reason: 'forged' };
  }
  if (now >= expiresAt) return { ok: false, reason: 'expired' };
  return { ok: true, alarmId, contactId, tokenId, expiresAt };
}
