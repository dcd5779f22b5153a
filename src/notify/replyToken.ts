import { createHmac, timingSafeEqual } from 'node:crypto';

/**
 * Reply tokens: what lets a mailed "OK" acknowledge. One token per mail and recipient, signed with
 * HMAC-SHA256 (RFC 2104) under the site's acknowledge secret over the mail's Message-ID, the contact it
 * went to and an expiry. Only the Message-ID it threads to and the contact its From maps to can make
 * it verify, so a forged From or a reply to someone else's mail fails without any stored state.
 *
 * Text: `pw-<expiry, epoch seconds, base36>-<MAC, 128 bits, base32>`. Lower-case letters and digits
 * only, so it survives mail clients that change case in subjects and a reader copying it by hand.
 * The MAC is truncated to 128 bits, half the hash length, the least RFC 2104 §5 recommends.
 */
const MAC_LABEL = 'pairwatch-reply';
const MAC_BYTES = 16;
const BASE32 = 'abcdefghijklmnopqrstuvwxyz234567'; // RFC 4648 §6 alphabet, lower case
const TOKEN_RE = /\bpw-([0-9a-z]{1,11})-([a-z2-7]{26})\b/gi;

export interface ReplyTokenClaims {
  /** Message-ID of the mail the token is printed in, with or without angle brackets. */
  messageId: string;
  /** The contact the mail went to; `mail-test` uses a recipient key of its own. */
  recipient: string;
  expiresAt: number;
}

export type ReplyTokenCheck = { ok: true; expiresAt: number } | { ok: false; reason: 'malformed' | 'forged' | 'expired' };

function base32(bytes: Buffer): string {
  let out = '';
  let bits = 0;
  let value = 0;
  for (const byte of bytes) {
    value = (value << 8) | byte;
    bits += 8;
    while (bits >= 5) {
      out += BASE32[(value >>> (bits - 5)) & 31];
      bits -= 5;
    }
  }
  if (bits > 0) out += BASE32[(value << (5 - bits)) & 31];
  return out;
}

const bare = (messageId: string) => messageId.trim().replace(/^<|>$/g, '');

function mac(claims: { messageId: string; recipient: string }, expirySeconds: number, secret: Buffer): string {
  const input = `${MAC_LABEL}:${bare(claims.messageId)}:${claims.recipient}:${expirySeconds}`;
  return base32(createHmac('sha256', secret).update(input, 'utf8').digest().subarray(0, MAC_BYTES));
}

export function signReplyToken(claims: ReplyTokenClaims, secret: Buffer): string {
  const seconds = Math.ceil(claims.expiresAt / 1000);
  return `pw-${seconds.toString(36)}-${mac(claims, seconds, secret)}`;
}

/** Signature first (constant-time), then expiry, so an unsigned token learns nothing about expiry. */
export function checkReplyToken(token: string, claims: { messageId: string; recipient: string }, secret: Buffer, now: number): ReplyTokenCheck {
  const match = /^pw-([0-9a-z]{1,11})-([a-z2-7]{26})$/.exec(token.toLowerCase());
  if (!match) return { ok: false, reason: 'malformed' };
  const seconds = parseInt(match[1]!, 36);
  if (!Number.isSafeInteger(seconds)) return { ok: false, reason: 'malformed' };
  const expected = Buffer.from(mac(claims, seconds, secret));
  const given = Buffer.from(match[2]!);
  if (given.length !== expected.length || !timingSafeEqual(given, expected)) return { ok: false, reason: 'forged' };
  const expiresAt = seconds * 1000;
  if (now >= expiresAt) return { ok: false, reason: 'expired' };
  return { ok: true, expiresAt };
}

/** Every token-shaped string in a text, lower-cased, first seen first. */
export function findReplyTokens(text: string): string[] {
  return [...new Set([...text.matchAll(TOKEN_RE)].map((m) => m[0].toLowerCase()))];
}

/** The key a spent token is kept under (used_ack_tokens); prefixed so it never meets a link token's id. */
export function replyTokenKey(token: string): string {
  return `reply-${token.toLowerCase()}`;
}
