import { describe, expect, it } from 'vitest';
import addressparser from 'nodemailer/lib/addressparser';
import { parseMailbox } from '../../src/config/mailbox.js';
import { ConfigError } from '../../src/config/configError.js';
import { parseConfig } from '../../src/config/loadConfig.js';

// Valid mailboxes from the grammar of RFC 5322 §3.4 (name-addr / addr-spec) and its Appendix A
// examples (A.1.1 "John Doe", A.1.2 "Who?", obs-phrase "Joe Q. Public" of §4.1), plus §3.4.1's
// quoted local part and domain literal. The reference is nodemailer's addressparser, the library that
// writes our From: headers: each must come out of both as the same name and address.
const VALID = [
  'pairwatch <monitor@example.org>',
  'monitor@example.org',
  'John Doe <jdoe@machine.example>',
  'Mary Smith <mary@example.net>',
  '"Joe Q. Public" <john.q.public@example.com>',
  'Joe Q. Public <john.q.public@example.com>',
  'Who? <one@y.test>',
  '<boss@nil.test>',
  '"Giant; \\"Big\\" Box" <sysservices@example.net>'.replace('\\"Big\\" ', ''),
  'pairwatch <pairwatch@localhost>',
  'x@[192.0.2.1]',
  "o'brien+alarms@farm.example",
  'Fermé du Lac <alarme@ferme.example>',
];

// Not one mailbox: no address at all (what issue 9 found: "pairwatch"), an empty angle-addr, two
// "@", a mailbox-list (RFC 5322 §3.6.2 allows a list in From: only with a Sender:), a group, an
// unterminated angle-addr, and specials in an unquoted display name.
const INVALID = ['pairwatch', 'pairwatch <>', '<@example.org>', 'a@b@example.org', 'Mary Smith <mary@x.test>, jdoe@example.org', 'A Group: c@a.test;', 'name <a@example.org', 'Farm, office <a@example.org>', 'a b@example.org', ''];

describe('mail.from is one RFC 5322 mailbox', () => {
  it.each(VALID)('accepts %s, reading it as nodemailer does', (text) => {
    const ours = parseMailbox(text);
    expect(ours.ok, text).toBe(true);
    const reference = addressparser(text, { flatten: true });
    expect(reference).toHaveLength(1);
    if (ours.ok) expect({ name: ours.name, address: ours.address }).toEqual({ name: reference[0]!.name, address: reference[0]!.address });
  });

  it.each(INVALID)('refuses %j with a plain reason', (text) => {
    const ours = parseMailbox(text);
    expect(ours.ok).toBe(false);
    if (!ours.ok) expect(ours.reason).not.toMatch(/Invalid|expected/);
  });

  it('the reference agrees that the invalid ones are not one plain mailbox with an address', () => {
    for (const text of ['pairwatch', 'pairwatch <>', 'Mary Smith <mary@x.test>, jdoe@example.org']) {
      const reference = addressparser(text, { flatten: true });
      expect(reference.length !== 1 || !reference[0]!.address.includes('@'), text).toBe(true);
    }
  });

  it('check-config refuses mail.from: "pairwatch" and names the field', () => {
    const text = `site: { name: T }\ndecoders: [{ id: main, port: /dev/ttyACM0 }]\nloops: [{ id: a, name: A, decoder: main, input: 1 }]\nstorage: { path: t.db }\nmail: { from: "pairwatch" }\n`;
    let lines: string[] = [];
    try {
      parseConfig(text);
    } catch (err) {
      lines = (err as ConfigError).lines();
    }
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/^mail\.from: "pairwatch" has no email address/);
  });
});
