import { afterEach, describe, expect, it } from 'vitest';
import { computeAckMac, newAckTokenId, signAckToken, verifyAckToken } from '../../src/notify/ackToken.js';
import { checkAckLink, redeemAckLink } from '../../src/notify/redeemAckToken.js';
import { ackTokenUsedAt, markAckTokenUsed } from '../../src/store/alarmRepo.js';
import { openTestDb, type TestDb } from './helpers/notifyDb.js';

const secret = Buffer.alloc(32, 7);
const now = Date.parse('2026-12-01T06:00:00.000Z');
const week = 7 * 86_400_000;

describe('HMAC-SHA256 underneath the tokens', () => {
  // RFC 4231 §4.2 and §4.3, test cases 1 and 2, HMAC-SHA-256 (values from the RFC, copied from memory of its text).
  it('matches RFC 4231 test case 1', () => {
    const mac = computeAckMac('Hi There', Buffer.alloc(20, 0x0b));
    expect(mac.toString('hex')).toBe('b0344c61d8db38535ca8afceaf0bf12b881dc200c9833da726e9376c2e32cff7');
  });
  it('matches RFC 4231 test case 2', () => {
    const mac = computeAckMac('what do ya want for nothing?', Buffer.from('Jefe'));
    expect(mac.toString('hex')).toBe('5bdcc146bf60754e6a042426089575c75a003f089d2739839dec58b964ec3843');
  });
});

describe('signAckToken / verifyAckToken', () => {
  const token = signAckToken({ alarmId: 42, contactId: 'office', expiresAt: now + week, tokenId: 'tok_0123456789abcdef' }, secret);

  it('round-trips the claims', () => {
    expect(verifyAckToken(token, secret, now)).toEqual({ ok: true, alarmId: 42, contactId: 'office', tokenId: 'tok_0123456789abcdef', expiresAt: now + week });
  });

  it('uses only URL-safe characters', () => {
    // RFC 3986 §2.3: unreserved = ALPHA / DIGIT / "-" / "." / "_" / "~" — needs no percent-encoding in a path.
    expect(token).toMatch(/^[A-Za-z0-9\-._~]+$/);
    expect(encodeURIComponent(token)).toBe(token);
  });

  it('refuses a token signed with another secret as forged', () => {
    const other = signAckToken({ alarmId: 42, contactId: 'office', expiresAt: now + week, tokenId: 'tok_0123456789abcdef' }, Buffer.alloc(32, 8));
    expect(verifyAckToken(other, secret, now)).toEqual({ ok: false, reason: 'forged' });
  });

  it('refuses a token whose alarm id was changed as forged', () => {
    const tampered = token.replace('a2.42.', 'a2.43.');
    expect(tampered).not.toBe(token);
    expect(verifyAckToken(tampered, secret, now)).toEqual({ ok: false, reason: 'forged' });
  });

  it('binds the contact: a token re-addressed to another contact is forged (issue 9)', () => {
    const tampered = token.replace('a2.42.office.', 'a2.42.shepherd.');
    expect(tampered).not.toBe(token);
    expect(verifyAckToken(tampered, secret, now)).toEqual({ ok: false, reason: 'forged' });
    // Dropping the contact to pass as a link of the earlier layout does not verify either.
    const parts = token.split('.');
    const asOld = ['a1', parts[1], parts[3], parts[4], parts[5]].join('.');
    expect(verifyAckToken(asOld, secret, now)).toEqual({ ok: false, reason: 'forged' });
  });

  it('still accepts a genuine link of the earlier layout (no contact) until it expires', () => {
    const part = `a1.42.${now + week}.tok_0123456789abcdef`;
    const old = `${part}.${computeAckMac(`pairwatch-ack:${part}`, secret).toString('base64url')}`;
    expect(verifyAckToken(old, secret, now)).toEqual({ ok: true, alarmId: 42, contactId: null, tokenId: 'tok_0123456789abcdef', expiresAt: now + week });
  });

  it('refuses to sign for something that is not a contact id', () => {
    for (const contactId of ['', 'Office', 'a.b', 'x'.repeat(41)]) {
      expect(() => signAckToken({ alarmId: 1, contactId, expiresAt: now, tokenId: 'tok_0123456789abcdef' }, secret)).toThrow(RangeError);
    }
  });

  it('refuses a token whose expiry was pushed out as forged', () => {
    const tampered = token.replace(`.${now + week}.`, `.${now + 2 * week}.`);
    expect(verifyAckToken(tampered, secret, now)).toEqual({ ok: false, reason: 'forged' });
  });

  it('refuses a token with one MAC character changed as forged', () => {
    const last = token.at(-2) === 'A' ? 'B' : 'A';
    const tampered = `${token.slice(0, -2)}${last}${token.at(-1)}`;
    expect(verifyAckToken(tampered, secret, now)).toEqual({ ok: false, reason: 'forged' });
  });

  it('refuses an expired token, at and after the expiry instant', () => {
    expect(verifyAckToken(token, secret, now + week - 1).ok).toBe(true);
    expect(verifyAckToken(token, secret, now + week)).toEqual({ ok: false, reason: 'expired' });
    expect(verifyAckToken(token, secret, now + 2 * week)).toEqual({ ok: false, reason: 'expired' });
  });

  it.each(['', 'abc', 'a1.42', `${token}.x`, token.replace('a2.', 'a3.'), token.replace('a2.42', 'a2.0'), token.replace('a2.42', 'a2.4x'), token.replace('.office.', '.Office.'), token.replace('.office.', '..'), 'a1.1.2.short.mac', 'x'.repeat(500)])(
    'refuses %j as malformed',
    (bad) => {
      expect(verifyAckToken(bad, secret, now)).toEqual({ ok: false, reason: 'malformed' });
    },
  );

  it('refuses to sign an alarm id, expiry or token id outside its range, saying which', () => {
    const ok = { alarmId: 1, contactId: 'office', expiresAt: now, tokenId: 'tok_0123456789abcdef' };
    for (const alarmId of [0, -1, 1.5, Number.NaN, 2 ** 53]) {
      expect(() => signAckToken({ ...ok, alarmId }, secret)).toThrow(new RangeError(`alarmId must be a positive integer, got ${alarmId}`));
    }
    for (const expiresAt of [-1, 1.5, Number.POSITIVE_INFINITY]) {
      expect(() => signAckToken({ ...ok, expiresAt }, secret)).toThrow(new RangeError(`expiresAt must be epoch milliseconds, got ${expiresAt}`));
    }
    for (const tokenId of ['short', 'x'.repeat(65), 'tok with space']) {
      expect(() => signAckToken({ ...ok, tokenId }, secret)).toThrow(new RangeError('tokenId must be 8–64 characters of A-Z a-z 0-9 _ -'));
    }
    expect(() => signAckToken({ ...ok, contactId: 'Office' }, secret)).toThrow(new RangeError('contactId must be a config contact id, got "Office"'));
    // The edges themselves are allowed: alarm 1, expiry at the epoch, an 8-character id.
    expect(verifyAckToken(signAckToken({ ...ok, expiresAt: 0, tokenId: 'abcdefgh' }, secret), secret, -1)).toMatchObject({ ok: true, alarmId: 1, expiresAt: 0 });
  });

  it('refuses a token that is not a string as malformed, without throwing', () => {
    expect(verifyAckToken(42 as unknown as string, secret, now)).toEqual({ ok: false, reason: 'malformed' });
    expect(verifyAckToken(undefined as unknown as string, secret, now)).toEqual({ ok: false, reason: 'malformed' });
  });

  it('a genuine earlier-layout token under another version tag is malformed, not accepted', () => {
    const part = `a1.42.${now + week}.tok_0123456789abcdef`;
    const old = `${part}.${computeAckMac(`pairwatch-ack:${part}`, secret).toString('base64url')}`;
    expect(verifyAckToken(old.replace(/^a1\./, 'a3.'), secret, now)).toEqual({ ok: false, reason: 'malformed' });
    expect(verifyAckToken(old.replace(/^a1\./, 'a2.'), secret, now)).toEqual({ ok: false, reason: 'malformed' });
  });

  it('an alarm id or expiry past 2^53 − 1 (ECMA-262 Number.MAX_SAFE_INTEGER) is malformed, even with the other one fine', () => {
    const big = '9007199254740993';
    const mac = computeAckMac('x', secret).toString('base64url');
    expect(verifyAckToken(`a2.${big}.office.${now + week}.tok_0123456789abcdef.${mac}`, secret, now)).toEqual({ ok: false, reason: 'malformed' });
    expect(verifyAckToken(`a2.42.office.${big}.tok_0123456789abcdef.${mac}`, secret, now)).toEqual({ ok: false, reason: 'malformed' });
  });

  it('a MAC spelt another way that decodes to the same bytes is forged (RFC 4648 §3.5: canonical encoding)', () => {
    // 43 base64url characters carry 258 bits; the last character's 2 lowest bits are padding.
    const alphabet = 'ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789-_';
    const last = token.at(-1)!;
    const twin = alphabet[alphabet.indexOf(last) ^ 1]!;
    const respelt = `${token.slice(0, -1)}${twin}`;
    expect(Buffer.from(respelt.split('.').at(-1)!, 'base64url')).toEqual(Buffer.from(token.split('.').at(-1)!, 'base64url'));
    expect(verifyAckToken(respelt, secret, now)).toEqual({ ok: false, reason: 'forged' });
  });

  it('makes distinct, URL-safe single-use ids', () => {
    const ids = new Set(Array.from({ length: 100 }, () => newAckTokenId()));
    expect(ids.size).toBe(100);
    for (const id of ids) expect(id).toMatch(/^[A-Za-z0-9_-]{22}$/);
  });
});

describe('single use and alarm binding (real SQLite)', () => {
  let t: TestDb;
  afterEach(() => t?.cleanup());

  it('markAckTokenUsed is true once, then false', () => {
    t = openTestDb();
    expect(markAckTokenUsed(t.db, 'tok_aaaaaaaaaaaa', now)).toBe(true);
    expect(markAckTokenUsed(t.db, 'tok_aaaaaaaaaaaa', now + 1000)).toBe(false);
    expect(ackTokenUsedAt(t.db, 'tok_aaaaaaaaaaaa')).toBe(now);
    expect(ackTokenUsedAt(t.db, 'tok_bbbbbbbbbbbb')).toBeNull();
  });

  it('a reused link is refused; checking (GET) never spends it', () => {
    t = openTestDb();
    const token = signAckToken({ alarmId: 5, contactId: 'office', expiresAt: now + week, tokenId: newAckTokenId() }, secret);
    expect(checkAckLink(t.db, token, secret, now, 5).ok).toBe(true);
    expect(checkAckLink(t.db, token, secret, now, 5).ok).toBe(true);
    expect(redeemAckLink(t.db, token, secret, now, 5).ok).toBe(true);
    expect(redeemAckLink(t.db, token, secret, now, 5)).toEqual({ ok: false, reason: 'used' });
    expect(checkAckLink(t.db, token, secret, now, 5)).toEqual({ ok: false, reason: 'used' });
  });

  it("a link for one alarm is refused for another, and is not spent by the attempt", () => {
    t = openTestDb();
    const token = signAckToken({ alarmId: 5, contactId: 'office', expiresAt: now + week, tokenId: newAckTokenId() }, secret);
    expect(redeemAckLink(t.db, token, secret, now, 6)).toEqual({ ok: false, reason: 'other-alarm' });
    expect(redeemAckLink(t.db, token, secret, now, 5).ok).toBe(true);
  });

  it('forged and expired links are refused before anything is spent', () => {
    t = openTestDb();
    const tokenId = newAckTokenId();
    const expired = signAckToken({ alarmId: 5, contactId: 'office', expiresAt: now - 1, tokenId }, secret);
    expect(redeemAckLink(t.db, expired, secret, now, 5)).toEqual({ ok: false, reason: 'expired' });
    const forged = signAckToken({ alarmId: 5, contactId: 'office', expiresAt: now + week, tokenId }, Buffer.alloc(32, 1));
    expect(redeemAckLink(t.db, forged, secret, now, 5)).toEqual({ ok: false, reason: 'forged' });
    expect(ackTokenUsedAt(t.db, tokenId)).toBeNull();
  });
});
