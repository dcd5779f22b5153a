/**
 * The words a person wrote above the quote: the first paragraph of a reply. Mail clients mark quoted
 * text with "> " (RFC 3676 §4.5) or put it under an attribution line; both end the reader's own text.
 */
const QUOTE_START = [
  /^\s*>/,
  /^\s*On .{1,200}wrote:\s*$/i, // common practice: most clients' attribution line
  /^\s*Am .{1,200}schrieb.{0,60}:\s*$/i,
  /^\s*Le .{1,200}a écrit\s*:\s*$/i,
  /^\s*-{2,}\s*Original Message\s*-{2,}/i,
  /^\s*-{2,}\s*Ursprüngliche Nachricht\s*-{2,}/i,
  /^\s*From:\s/i, // Outlook puts the parent's header block under the reply
  /^-- $/, // signature separator (RFC 3676 §4.3)
];

export function firstParagraph(text: string): string {
  const lines = text.replace(/\r\n?/g, '\n').split('\n');
  const own: string[] = [];
  for (const line of lines) {
    if (QUOTE_START.some((re) => re.test(line))) break;
    if (line.trim() === '') {
      if (own.length > 0) break;
      continue;
    }
    own.push(line.trim());
  }
  return own.join(' ').replace(/\s+/g, ' ').trim();
}

/** Acknowledging words, compared case-insensitively (en, de, fr, es, nl). */
const ACK_WORDS = /^(ok(?:ay)?|ack(?:nowledged?)?|quittiert|bestätigt|reçu|recibido|akkoord)(?=$|[\s,.;:!?–—-])/i;
const NOTE_MAX = 500;

export type ReplyIntent =
  | { kind: 'acknowledge'; note: string | null }
  | { kind: 'shelve'; durationText: string; reason: string }
  | { kind: 'other'; words: string };

/** What the first paragraph asks for: "OK, on my way" → acknowledge with note "on my way". */
export function readIntent(paragraph: string): ReplyIntent {
  const ack = ACK_WORDS.exec(paragraph);
  if (ack) {
    const rest = paragraph.slice(ack[0].length).replace(/^[\s,.;:!?–—-]+/, '').trim();
    return { kind: 'acknowledge', note: rest === '' ? null : rest.slice(0, NOTE_MAX) };
  }
  const shelve = /^shelve\s+(\S+)\s*(.*)$/i.exec(paragraph);
  if (shelve) return { kind: 'shelve', durationText: shelve[1]!.toLowerCase(), reason: shelve[2]!.trim().slice(0, NOTE_MAX) };
  return { kind: 'other', words: paragraph.slice(0, 80) };
}
