/**
 * The rule for text people type (notes, shelve reasons) at the web boundary. The text goes into the
 * audit trail, pages, CSV and the plain-text part of every contact's mail, so nothing in it may break
 * a line or reorder what is shown around it:
 * - line breaks and tabs (CR, LF, TAB, U+2028, U+2029) are folded into one space, so a textarea's
 *   Enter keeps working but can never start a new line of its own in a mail;
 * - every other control character (C0 including NUL, DEL, C1 — Unicode general category Cc), the
 *   bidirectional embedding/override/isolate marks (Unicode UAX #9: U+202A–U+202E, U+2066–U+2069,
 *   plus U+200E, U+200F, U+061C) and lone surrogates (not encodable as UTF-8, RFC 3629) are refused
 *   with a reason, never silently cut.
 */
const FOLDED = /[\t\r\n\u2028\u2029]+/g;
const REFUSED = /[\p{Cc}\u202a-\u202e\u2066-\u2069\u200e\u200f\u061c]/u;
const LONE_SURROGATE = /\p{Cs}/u;

export function foldFreeText(text: string): string {
  return text.replace(FOLDED, ' ');
}

/** Why folded text is refused, or null when it is fine. */
export function freeTextProblem(folded: string): string | null {
  if (LONE_SURROGATE.test(folded)) return 'contains a broken character (a lone UTF-16 surrogate)';
  const bad = REFUSED.exec(folded);
  if (bad) return `must not contain control or text-direction characters (found U+${bad[0].codePointAt(0)!.toString(16).toUpperCase().padStart(4, '0')})`;
  return null;
}
