/**
 * One RFC 5322 §3.4 `mailbox`: `name-addr` (`[display-name] "<" addr-spec ">"`) or a bare `addr-spec`.
 * mail.from is written into every message's From: header (RFC 5322 §3.6.2 requires one mailbox there)
 * and its domain names the Message-IDs, so a bare word such as "pairwatch" must be refused up front.
 *
 * Kept deliberately to the plain grammar: atoms, quoted strings and dot-atoms, with the obsolete
 * "." inside a display name (§4.1 obs-phrase, as in `Joe Q. Public`). Comments in parentheses,
 * groups and lists are refused: a sender is one mailbox. Non-ASCII letters are allowed in the
 * display name (RFC 6532); nodemailer encodes them for the header.
 */
export type MailboxParse = { ok: true; name: string; address: string } | { ok: false; reason: string };

const ATEXT = "A-Za-z0-9!#$%&'*+\\-/=?^_`{|}~";
const ATOM = `[${ATEXT}]+`;
const DOT_ATOM = `${ATOM}(?:\\.${ATOM})*`;
const QUOTED = '"(?:[^"\\\\\\r\\n]|\\\\[^\\r\\n])*"';
const DOMAIN_LITERAL = '\\[[\\x21-\\x5a\\x5e-\\x7e]*\\]';
const ADDR_SPEC = new RegExp(`^(?:${DOT_ATOM}|${QUOTED})@(?:${DOT_ATOM}|${DOMAIN_LITERAL})$`);
/** display-name: words (atoms with RFC 6532 UTF-8, or quoted strings), spaces and obs-phrase dots. */
const PHRASE = new RegExp(`^(?:[${ATEXT}\\u0080-\\uFFFF]+|${QUOTED})(?:[ \\t]+|\\.|[${ATEXT}\\u0080-\\uFFFF]+|${QUOTED})*$`);

const EXAMPLE = 'pairwatch <monitor@example.org>';

export function parseMailbox(text: string): MailboxParse {
  const value = text.trim();
  if (/[\r\n]/.test(value)) return { ok: false, reason: 'must be on one line' };
  const open = value.lastIndexOf('<');
  if (open === -1) {
    if (ADDR_SPEC.test(value)) return { ok: true, name: '', address: value };
    return {
      ok: false,
      reason: value.includes('@')
        ? `"${value}" is not an email address; write a mailbox such as ${EXAMPLE}`
        : `"${value}" has no email address; write a mailbox such as ${EXAMPLE} (RFC 5322 needs an address in From:)`,
    };
  }
  if (!value.endsWith('>')) return { ok: false, reason: `the address must end with ">", as in ${EXAMPLE}` };
  const address = value.slice(open + 1, -1).trim();
  const rawName = value.slice(0, open).trim();
  if (!ADDR_SPEC.test(address)) return { ok: false, reason: `"${address}" between < and > is not an email address; write e.g. ${EXAMPLE}` };
  if (rawName && !PHRASE.test(rawName)) {
    return { ok: false, reason: `the name "${rawName}" needs double quotes around it (it holds characters such as , ; : < > ( ) @), e.g. "Farm, office" <monitor@example.org>` };
  }
  return { ok: true, name: unquote(rawName), address };
}

/** The display name as people read it: quotes and backslash escapes removed, spaces folded. */
function unquote(phrase: string): string {
  return phrase
    .replace(/"((?:[^"\\]|\\.)*)"/g, (_, inner: string) => inner.replace(/\\(.)/g, '$1'))
    .replace(/[ \t]+/g, ' ')
    .trim();
}
