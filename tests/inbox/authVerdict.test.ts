import { generateKeyPairSync } from 'node:crypto';
import { dkimSign } from 'mailauth';
import { describe, expect, it } from 'vitest';
import { parseAuthenticationResults, readAuthVerdict } from '../../src/inbox/authVerdict.js';

/**
 * The sender check recorded beside a mail acknowledgement. DKIM (RFC 6376) is signed here with
 * mailauth's own signer and verified by the code under test through a DNS resolver of the test's own,
 * so nothing leaves the machine; Authentication-Results is read as RFC 8601 §2.2 writes it.
 */
const { privateKey, publicKey } = generateKeyPairSync('rsa', { modulusLength: 2048 });
const pem = privateKey.export({ type: 'pkcs8', format: 'pem' }).toString();
const p = publicKey.export({ type: 'spki', format: 'der' }).toString('base64');
const resolver = async (name: string, rrtype: string) => {
  if (rrtype === 'TXT' && name === 'phone._domainkey.hollins.test') return [[`v=DKIM1; k=rsa; p=${p}`]];
  if (rrtype === 'TXT' && name === 'phone._domainkey.bulkmail.test') return [[`v=DKIM1; k=rsa; p=${p}`]];
  throw Object.assign(new Error(`no ${rrtype} for ${name}`), { code: 'ENOTFOUND' });
};

const message = (from: string, body = 'OK, on my way\r\n') =>
  Buffer.from(`From: ${from}\r\nTo: alarms@hollins.test\r\nSubject: Re: alarm\r\nMessage-ID: <a1@hollins.test>\r\nDate: Wed, 02 Dec 2026 04:00:00 +0000\r\n\r\n${body}`);

async function signed(from: string, domain: string): Promise<Buffer> {
  const raw = message(from);
  const { signatures } = await dkimSign(raw, { canonicalization: 'relaxed/relaxed', signatureData: [{ signingDomain: domain, selector: 'phone', privateKey: pem }] } as unknown as Parameters<typeof dkimSign>[1]);
  return Buffer.concat([Buffer.from(signatures), raw]);
}

describe('sender check (DKIM, Authentication-Results)', () => {
  it('parses Authentication-Results as RFC 8601 §2.2 writes it, comments dropped', () => {
    // Shaped after RFC 8601 Appendix B.
    expect(parseAuthenticationResults('example.com; spf=pass smtp.mailfrom=example.net (sender ok); dkim=pass header.d=example.net; dmarc=fail')).toEqual({
      authservId: 'example.com',
      results: [
        { method: 'spf', result: 'pass' },
        { method: 'dkim', result: 'pass' },
        { method: 'dmarc', result: 'fail' },
      ],
    });
  });

  it('a DKIM signature of the From domain verifies: pass', async () => {
    const v = await readAuthVerdict(await signed('office@hollins.test', 'hollins.test'), 'office@hollins.test', null, { resolver });
    expect(v.dkim).toBe('pass');
    expect(v.summary).toContain('DKIM pass (hollins.test) by mailauth');
  });

  it('a valid signature by another domain is not a pass for this From (alignment, RFC 7489 §3.1.1)', async () => {
    const v = await readAuthVerdict(await signed('office@hollins.test', 'bulkmail.test'), 'office@hollins.test', null, { resolver });
    expect(v.dkim).toBe('policy');
    expect(v.summary).toContain('not aligned with hollins.test');
  });

  it('a message changed after signing is not a pass (mailauth reports the body-hash mismatch as neutral), so require_dkim refuses it', async () => {
    const tampered = Buffer.from((await signed('office@hollins.test', 'hollins.test')).toString().replace('OK, on my way', 'OK, all clear'));
    const v = await readAuthVerdict(tampered, 'office@hollins.test', null, { resolver });
    expect(v.dkim).not.toBe('pass');
    expect(v.summary).toMatch(/^DKIM (neutral|fail) \(hollins\.test\) by mailauth/);
  });

  it('without a signature the provider\'s Authentication-Results stands in, and is recorded', async () => {
    const v = await readAuthVerdict(message('office@hollins.test'), 'office@hollins.test', 'mx.provider.test; dkim=pass header.d=hollins.test; spf=pass; dmarc=pass', { resolver });
    expect(v).toEqual({ dkim: 'pass', summary: 'Authentication-Results mx.provider.test: dkim=pass spf=pass dmarc=pass' });
    expect((await readAuthVerdict(message('office@hollins.test'), 'office@hollins.test', null, { resolver })).dkim).toBe('none');
  });
});
