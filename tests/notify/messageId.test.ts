import fc from 'fast-check';
import { hostname } from 'node:os';
import { describe, expect, it } from 'vitest';
import { createMessageIdFactory, messageIdDomain } from '../../src/notify/messageId.js';

/**
 * The production Message-ID generator against RFC 5322 §3.6.4:
 *   msg-id   = [CFWS] "<" id-left "@" id-right ">" [CFWS]
 *   id-left  = dot-atom-text / obs-id-left
 *   id-right = dot-atom-text / no-fold-literal / obs-id-right
 * and §3.2.3: dot-atom-text = 1*atext *("." 1*atext), atext = ALPHA / DIGIT / "!" / "#" / "$" / "%" /
 * "&" / "'" / "*" / "+" / "-" / "/" / "=" / "?" / "^" / "_" / "`" / "{" / "|" / "}" / "~".
 * Generated ids must use the non-obsolete forms, and dot-atom-text on both sides (no literal, no CFWS).
 * The expression below is written from that grammar, not from the generator.
 */
const ATEXT = "[A-Za-z0-9!#$%&'*+\\-/=?^_`{|}~]";
const DOT_ATOM_TEXT = `${ATEXT}+(?:\\.${ATEXT}+)*`;
const MSG_ID = new RegExp(`^<(${DOT_ATOM_TEXT})@(${DOT_ATOM_TEXT})>$`);

describe('Message-ID (RFC 5322 §3.6.4)', () => {
  it('the grammar itself: accepts and refuses what the RFC does', () => {
    // Hand-picked from the grammar: sanity for the expression the real ids are held to.
    expect(MSG_ID.test('<a.b@c.d>')).toBe(true);
    expect(MSG_ID.test("<x!#$%&'*+-/=?^_`{|}~@y>")).toBe(true);
    for (const bad of ['a@b', '<a@b', '<@b>', '<a@>', '<a..b@c>', '<.a@c>', '<a.@c>', '<a@c.>', '<a b@c>', '<a@b@c>', '<a@[1.2.3.4]>']) {
      expect(MSG_ID.test(bad), bad).toBe(false);
    }
  });

  it('ids for ordinary senders are msg-id with dot-atom-text on both sides, the sender domain on the right', () => {
    for (const [from, domain] of [
      ['pairwatch <monitor@ridgeway.example>', 'ridgeway.example'],
      ['monitor@farm-office.example.org', 'farm-office.example.org'],
      ['"Farm, monitor" <alerts@mail.example.co.uk>', 'mail.example.co.uk'],
    ] as const) {
      expect(messageIdDomain(from)).toBe(domain);
      const id = createMessageIdFactory(messageIdDomain(from))();
      const match = MSG_ID.exec(id);
      expect(match, id).not.toBeNull();
      expect(match![2]).toBe(`pairwatch.${domain}`);
    }
  });

  it('a localhost sender falls back to this host under .invalid (RFC 2606), still a valid msg-id', () => {
    const domain = messageIdDomain('pairwatch <pairwatch@localhost>');
    expect(domain.endsWith('.invalid')).toBe(true);
    expect(domain).toContain(hostname().replace(/[^A-Za-z0-9.-]/g, '').split('.')[0] ?? 'localhost');
    expect(MSG_ID.test(createMessageIdFactory(domain)())).toBe(true);
  });

  it('for any sender domain (fast-check domains), the id is a valid msg-id', () => {
    fc.assert(
      fc.property(fc.domain(), fc.constantFrom('monitor', 'a.b', 'x-y'), (domain, local) => {
        const id = createMessageIdFactory(messageIdDomain(`pairwatch <${local}@${domain}>`))();
        expect(MSG_ID.test(id), id).toBe(true);
      }),
      { numRuns: 500 },
    );
  });

  it('is unique: 20,000 ids from one factory and from two factories for the same domain never repeat', () => {
    const a = createMessageIdFactory('example.org');
    const b = createMessageIdFactory('example.org');
    const seen = new Set<string>();
    for (let i = 0; i < 10_000; i++) {
      seen.add(a());
      seen.add(b());
    }
    expect(seen.size).toBe(20_000);
  });

  it('takes the domain from the end of the From mailbox, with or without angle brackets and trailing space (RFC 5322 §3.4)', () => {
    expect(messageIdDomain('pairwatch <monitor@Mail2.Ridgeway.example>  ')).toBe('Mail2.Ridgeway.example');
    expect(messageIdDomain('monitor@ridgeway.example ')).toBe('ridgeway.example');
    expect(messageIdDomain('"a@b" <monitor@ridgeway.example>')).toBe('ridgeway.example');
  });

  it('a From with no usable domain falls back to this host under .invalid, never to "undefined"', () => {
    const host = `${hostname().replace(/[^A-Za-z0-9.-]/g, '') || 'localhost'}.invalid`;
    expect(messageIdDomain('pairwatch')).toBe(host);
    expect(messageIdDomain('pairwatch <monitor@localhost>')).toBe(host);
    expect(messageIdDomain('monitor@ridgeway.example> trailing words')).toBe(host);
    expect(MSG_ID.test(createMessageIdFactory(messageIdDomain('pairwatch'))())).toBe(true);
  });
});
