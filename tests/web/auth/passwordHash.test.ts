import { describe, expect, it } from 'vitest';
import { deriveScryptKey, hashPassword, passwordProblem, verifyPassword } from '../../../src/web/auth/passwordHash.js';
import { sha256Hex } from '../../../src/web/auth/secretToken.js';

describe('scrypt', () => {
  it('matches the RFC 7914 §12 test vector (P="password", S="NaCl", N=1024, r=8, p=16, dkLen=64)', async () => {
    const key = await deriveScryptKey('password', 'NaCl', { log2N: 10, r: 8, p: 16 }, 64);
    expect(key.toString('hex')).toBe(
      'fdbabe1c9d3472007856e7190d01e9fe7c6ad7cbc8237830e77376634b373162' +
        '2eaf30d92e22a3886ff109279d9830dac727afb94a83ee6d8360cbdfa2cc0640',
    );
  });

  it('hashes with a fresh salt each time and verifies only the right password', async () => {
    const cost = { log2N: 10, r: 8, p: 1 };
    const a = await hashPassword('hay-loft-ladder', cost);
    const b = await hashPassword('hay-loft-ladder', cost);
    expect(a.salt).not.toBe(b.salt);
    expect(a.hash).not.toBe(b.hash);
    expect(a.hash).toMatch(/^scrypt\$10\$8\$1\$/);
    expect(await verifyPassword('hay-loft-ladder', a)).toBe(true);
    expect(await verifyPassword('hay-loft-ladde', a)).toBe(false);
    expect(await verifyPassword('hay-loft-ladder', { hash: 'garbage', salt: a.salt })).toBe(false);
    expect(await verifyPassword('hay-loft-ladder', { hash: 'scrypt$99$8$1$AAAA', salt: a.salt })).toBe(false);
  });

  it('the default cost is the OWASP minimum for scrypt (N=2^17, r=8, p=1)', async () => {
    const { DEFAULT_SCRYPT_COST } = await import('../../../src/web/auth/passwordHash.js');
    expect(DEFAULT_SCRYPT_COST).toEqual({ log2N: 17, r: 8, p: 1 });
  });

  it('asks for at least 15 characters for single-factor sign-in (NIST SP 800-63B rev. 4 §3.1.1.2)', () => {
    // Revision 4 (2025), §3.1.1.2 "Password Verifiers": at least 15 characters when the password is
    // used as a single-factor authenticator, 8 when it is part of multi-factor authentication. The
    // section number and wording are from memory of the published revision, not checked online here.
    // Revision 3's rule (§5.1.1.2) was 8 characters; pairwatch signs in with a password alone.
    expect(passwordProblem('a'.repeat(14))).toMatch(/at least 15 characters/);
    expect(passwordProblem('a'.repeat(15))).toBeNull();
    expect(passwordProblem('12345678')).not.toBeNull();
  });
});

describe('token hashing', () => {
  it('is SHA-256: FIPS 180-2 appendix B.1 example "abc"', () => {
    expect(sha256Hex('abc')).toBe('ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad');
  });
});
