import { parseDuration } from '../config/duration.js';
import { checkReplyToken, findReplyTokens, replyTokenKey } from '../notify/replyToken.js';
import { headerValues, type ParsedReply } from './parsedReply.js';
import { firstParagraph, readIntent } from './readReplyText.js';

/**
 * Does this message acknowledge an alarm, and with what note? Pure: a parsed message, the mails we
 * sent that it may thread to, the tokens already spent and `now` in; a verdict out. The shell reads
 * the mailbox, commits the verdict and marks the message.
 *
 * A reply acknowledges only when every check holds, in this order: it is about our mail; it is not
 * our own, a delivery report, an auto-reply or list mail; it threads to one of our mails; it carries
 * that mail's token, issued to the contact its From names, unexpired and unspent; DKIM passes when
 * required; and its first words acknowledge.
 */

/** What one of our sent mails was about, looked up by the Message-IDs a reply names. */
export interface KnownMail {
  messageId: string;
  kind: string;
  alarmIds: readonly number[];
}

export interface ReplyContact {
  id: string;
  name: string;
  email: string;
}

/** The recipient key `pairwatch mail-test` signs its test mail's token for. */
export const MAIL_TEST_RECIPIENT = 'mail-test';

export interface ReplyDecisionContext {
  now: number;
  secret: Buffer;
  contacts: readonly ReplyContact[];
  /** Addresses our own mail comes from (mail.from, the reply address), lower-case. */
  ownAddresses: readonly string[];
  /** Right-hand side of our Message-IDs, e.g. `pairwatch.example.org`. */
  ownMessageIdDomain: string;
  knownMails: ReadonlyMap<string, KnownMail>;
  /** replyTokenKey()s already spent. */
  spentTokens: ReadonlySet<string>;
  /** Contacts whose web user may shelve (operator or admin). */
  shelvers: ReadonlySet<string>;
  requireDkim: boolean;
  maxShelveMs: number;
}

export const REPLY_REFUSALS = [
  'own-message',
  'delivery-report',
  'auto-reply',
  'mailing-list',
  'no-thread',
  'no-token',
  'token-forged',
  'token-expired',
  'token-spent',
  'token-other-contact',
  'unknown-sender',
  'dkim-failed',
  'not-acknowledgement',
  'shelve-not-allowed',
  'shelve-unreadable',
] as const;
export type ReplyRefusal = (typeof REPLY_REFUSALS)[number];

export type ReplyDecision =
  /** Nothing to do with our mail: left exactly as it is. */
  | { verdict: 'not-ours' }
  /** About our mail, but not to be acted on: marked for a person. */
  | { verdict: 'refused'; reason: ReplyRefusal; detail: string }
  | { verdict: 'acknowledge'; contact: ReplyContact; mail: KnownMail; tokenKey: string; note: string | null }
  | { verdict: 'shelve'; contact: ReplyContact; mail: KnownMail; tokenKey: string; durationMs: number; reason: string; capped: boolean }
  | { verdict: 'test-reply'; from: string; testMessageId: string; tokenKey: string; words: string };

const refuse = (reason: ReplyRefusal, detail: string): ReplyDecision => ({ verdict: 'refused', reason, detail });

const AUTO_SUBJECT = /^\s*(auto:|automatic reply|autoreply|out of office|abwesend|absence|r[ée]ponse automatique|respuesta autom[áa]tica)/i;

function isDeliveryReport(reply: ParsedReply): boolean {
  // RFC 3464 §2 / RFC 6522: a DSN is multipart/report; report-type=delivery-status.
  if (reply.contentType === 'multipart/report') return true;
  if (headerValues(reply, 'x-failed-recipients').length > 0) return true;
  // common practice: bounces come from the mail system's own mailbox.
  return /^(mailer-daemon|postmaster)@/i.test(reply.from ?? '');
}

function autoReplyReason(reply: ParsedReply): string | null {
  // RFC 3834 §5.1: any Auto-Submitted value other than "no" marks automatic mail.
  for (const value of headerValues(reply, 'auto-submitted')) {
    const keyword = value.split(';')[0]!.trim().toLowerCase();
    if (keyword !== '' && keyword !== 'no') return `Auto-Submitted: ${keyword}`;
  }
  // common practice: older responders mark themselves with these instead.
  for (const name of ['x-autoreply', 'x-autorespond', 'x-autoresponder']) {
    if (headerValues(reply, name).length > 0) return `${name} header`;
  }
  const precedence = headerValues(reply, 'precedence').map((v) => v.trim().toLowerCase());
  const bulk = precedence.find((v) => ['bulk', 'junk', 'list', 'auto_reply'].includes(v));
  if (bulk) return `Precedence: ${bulk}`;
  if (AUTO_SUBJECT.test(reply.subject)) return 'an automatic-reply subject';
  return null;
}

/** List-Id (RFC 2919 §3) names a list; the RFC 2369 §3 fields are added by list servers to every message they pass on. */
const LIST_FIELDS = ['list-id', 'list-post', 'list-unsubscribe', 'list-subscribe', 'list-help', 'list-owner', 'list-archive'] as const;

/** Signed for this mail and recipient, expired or not. */
function signedFor(token: string, mail: KnownMail, recipient: string, secret: Buffer, now: number): boolean {
  const check = checkReplyToken(token, { messageId: mail.messageId, recipient }, secret, now);
  return check.ok || check.reason === 'expired';
}

export function decideReply(reply: ParsedReply, ctx: ReplyDecisionContext): ReplyDecision {
  const named = [...reply.inReplyTo, ...[...reply.references].reverse()];
  const ownDomain = `@${ctx.ownMessageIdDomain.toLowerCase()}>`;
  const ours = (id: string) => ctx.knownMails.has(id) || id.toLowerCase().endsWith(ownDomain);
  // The token rides in the subject tag, the quote, and (with reply_tag) the Reply-To address the reply went to.
  const addressed = ['to', 'cc', 'delivered-to', 'x-original-to'].flatMap((name) => headerValues(reply, name)).join('\n');
  const tokens = findReplyTokens(`${reply.subject}\n${reply.text}\n${addressed}`);
  const mentionsOurs = findReplyTokens(reply.attachedText).length > 0 || (reply.attachedText.match(/<[^<>\s]+>/g) ?? []).some(ours);
  const fromOurselves = (reply.from !== null && ctx.ownAddresses.includes(reply.from)) || (reply.messageId?.toLowerCase().endsWith(ownDomain) ?? false);
  if (!named.some(ours) && tokens.length === 0 && !fromOurselves && !mentionsOurs) return { verdict: 'not-ours' };

  if (fromOurselves) return refuse('own-message', 'sent by this monitor');
  if (isDeliveryReport(reply)) return refuse('delivery-report', 'a delivery status notification (bounce)');
  const auto = autoReplyReason(reply);
  if (auto) return refuse('auto-reply', `an automatic reply (${auto})`);
  const listField = LIST_FIELDS.find((name) => headerValues(reply, name).length > 0);
  if (listField) return refuse('mailing-list', `mailing-list mail (${listField})`);

  const words = firstParagraph(reply.text);
  const from = reply.from;
  const parents = [...new Set(named.filter((id) => ctx.knownMails.has(id)))].map((id) => ctx.knownMails.get(id)!);

  // A reply to `pairwatch mail-test`: its mail is not in the outbox, only its token tells.
  if (parents.length === 0 && from !== null) {
    for (const id of reply.inReplyTo) {
      const token = tokens.find((t) => checkReplyToken(t, { messageId: id, recipient: MAIL_TEST_RECIPIENT }, ctx.secret, ctx.now).ok);
      if (token) {
        const tokenKey = replyTokenKey(token);
        if (ctx.spentTokens.has(tokenKey)) return refuse('token-spent', 'this test mail was answered already');
        return { verdict: 'test-reply', from, testMessageId: id, tokenKey, words };
      }
    }
  }
  if (parents.length === 0) return refuse('no-thread', 'In-Reply-To/References name none of our alarm mails');
  if (tokens.length === 0) return refuse('no-token', 'carries no reference token (pw-…) from our mail');

  const contact = from === null ? undefined : ctx.contacts.find((c) => c.email.toLowerCase() === from);
  let expired = false;
  let match: { mail: KnownMail; token: string } | null = null;
  if (contact) {
    search: for (const mail of parents) {
      for (const token of tokens) {
        const check = checkReplyToken(token, { messageId: mail.messageId, recipient: contact.id }, ctx.secret, ctx.now);
        if (check.ok) {
          match = { mail, token };
          break search;
        }
        if (check.reason === 'expired') expired = true;
      }
    }
  }
  if (!match) {
    if (expired) return refuse('token-expired', 'the reference token has expired');
    const owner = ctx.contacts.find(
      (c) => c.id !== contact?.id && parents.some((mail) => tokens.some((t) => signedFor(t, mail, c.id, ctx.secret, ctx.now))),
    );
    if (owner) return refuse('token-other-contact', `the token was issued to ${owner.name}, not to ${from ?? 'this sender'}`);
    if (!contact) return refuse('unknown-sender', `${from ?? 'the sender'} is not one of the contacts`);
    return refuse('token-forged', 'the reference token does not verify for this mail and sender');
  }
  const tokenKey = replyTokenKey(match.token);
  if (ctx.spentTokens.has(tokenKey)) return refuse('token-spent', 'this mail was answered already; its token is spent');
  if (ctx.requireDkim && reply.auth.dkim !== 'pass') return refuse('dkim-failed', `DKIM is required and gave ${reply.auth.dkim}`);

  const intent = readIntent(words);
  if (intent.kind === 'acknowledge') return { verdict: 'acknowledge', contact: contact!, mail: match.mail, tokenKey, note: intent.note };
  if (intent.kind === 'shelve') {
    if (!ctx.shelvers.has(contact!.id)) return refuse('shelve-not-allowed', `${contact!.name} is not mapped to an operator (contacts[].user)`);
    const asked = parseDuration(intent.durationText);
    if (asked === undefined || asked <= 0 || intent.reason === '') {
      return refuse('shelve-unreadable', 'write "shelve 2h REASON": a duration such as 30m or 2h, then why');
    }
    const durationMs = Math.min(asked, ctx.maxShelveMs);
    return { verdict: 'shelve', contact: contact!, mail: match.mail, tokenKey, durationMs, reason: intent.reason, capped: durationMs < asked };
  }
  return refuse('not-acknowledgement', `the first words ("${intent.words}") are not an acknowledgement`);
}
