import { CONDITION_NAME, CONDITION_TEXT, PRIORITY_RANK, type Priority } from '../model/condition.js';
import { alarmStanding, BACK_TO_NORMAL_NEEDS_ACK, STANDING_WORDS } from '../model/alarmStanding.js';
import { checkAdvice, decoderLinkOf, type DecoderLink } from '../model/decoderLink.js';
import { signAckToken } from './ackToken.js';
import { signReplyToken } from './replyToken.js';
import { formatElapsed, formatSiteAndUtc } from './formatSiteTime.js';
import { escapeHtml, mailFooterHtml, mailFooterText, mailPageHtml, PRIORITY_HEADING, PRIORITY_TAG } from './mailLayout.js';
import type { Digest, NoticeAlarm, PendingNotice } from '../alarms/noticeTypes.js';
import { mailbox, type NoticeSettings } from './noticeSettings.js';
import type { OutboxMessage } from '../model/outboxMessage.js';

export interface NoticeComposeContext extends NoticeSettings {
  now: number;
  /** The alarms the digest's notices are about, as they stand now. */
  alarms: ReadonlyMap<number, NoticeAlarm>;
  /** Contact ids told about each alarm so far. */
  recipients: ReadonlyMap<number, readonly string[]>;
}

/** Short names for subjects (the model's one name per condition); CONDITION_TEXT has the full plain words for the body. */
export const CONDITION_SHORT = CONDITION_NAME;

const SUBJECT_MAX = 160;
export const REPLY_HINT = 'Reply with OK to acknowledge (you may add a note).';
const STATES_WITH_ACK_LINK = new Set(['unacknowledged', 'returned-unacknowledged']);

interface Entry {
  alarmId: number;
  alarm: NoticeAlarm | undefined;
  /** The latest notice decides the headline; earlier ones in the same window are history. */
  last: PendingNotice;
}

function labelOf(alarm: NoticeAlarm, ctx: NoticeComposeContext): string {
  if (alarm.loopId) return ctx.loops.find((l) => l.id === alarm.loopId)?.name ?? `Loop ${alarm.loopId}`;
  if (alarm.source === 'system') return 'Monitor';
  const decoder = ctx.decoders?.find((d) => d.id === alarm.source);
  if (!decoder) return alarm.source;
  // A configured name usually says what it is ("Decoder in the farm office"); an id alone does not.
  return decoder.name ?? `Decoder ${decoder.id}`;
}

/** How the alarm's decoder is linked, when the alarm is about a decoder whose port is known. */
function linkOf(alarm: NoticeAlarm, ctx: NoticeComposeContext): DecoderLink | null {
  const port = ctx.decoders?.find((d) => d.id === alarm.source)?.port;
  return port === undefined ? null : decoderLinkOf(port);
}

function actorOf(last: PendingNotice, alarm: NoticeAlarm): string | null {
  return last.actor ?? alarm.ackedBy ?? null;
}

/**
 * What happened, in a few words: the headline of one entry. `listed` is the form for a subject that
 * lists several conditions, where commas separate the conditions themselves.
 */
function phrase(entry: Entry, listed = false): string {
  const alarm = entry.alarm;
  if (!alarm) return `alarm #${entry.alarmId} (no longer on record)`;
  const condition = CONDITION_SHORT[alarm.condition];
  // Gone but not acknowledged (latched or not): the subject says so in the same words as the body's
  // status, whichever notice the mail is for, so the two can never disagree.
  const pending = alarmStanding(alarm.state, alarm.active) === 'cleared-unacknowledged';
  switch (entry.last.kind) {
    case 'raised':
      return pending ? `${condition}, ${BACK_TO_NORMAL_NEEDS_ACK}` : condition;
    case 'escalated':
    case 'repeat':
      if (pending) return `${condition}, ${BACK_TO_NORMAL_NEEDS_ACK}`;
      return listed ? condition : `${condition}, not acknowledged`;
    case 'acknowledged': {
      if (listed) return `${condition} (acknowledged)`;
      const actor = actorOf(entry.last, alarm);
      return actor ? `${condition}, acknowledged by ${actor}` : `${condition}, acknowledged`;
    }
    case 'cleared':
      // The mail shows the alarm as it stands when composed: a condition that came back meanwhile is not "back to normal".
      if (alarm.active) return listed ? `${condition} (back again)` : `${condition}, back again after clearing`;
      return pending ? BACK_TO_NORMAL_NEEDS_ACK : 'back to normal';
    case 'shelved':
      return listed ? `${condition} (shelved)` : `${condition}, shelved`;
    case 'unshelved':
      if (pending) return `${condition}, ${BACK_TO_NORMAL_NEEDS_ACK}`;
      return listed ? `${condition} (unshelved)` : `${condition}, back from shelving`;
  }
}

function priorityOf(entry: Entry): Priority {
  return entry.alarm?.priority ?? 'system';
}

function buildEntries(digest: Digest, ctx: NoticeComposeContext): Entry[] {
  const byAlarm = new Map<number, Entry>();
  for (const notice of digest.notices) {
    // Notices without an alarm carry nothing to show; alarm_id is always set by the alarm engine.
    if (notice.alarmId === null) continue;
    // A later notice about the same alarm takes the earlier one's place (a Map keeps the first insertion's position).
    byAlarm.set(notice.alarmId, { alarmId: notice.alarmId, alarm: ctx.alarms.get(notice.alarmId), last: notice });
  }
  return [...byAlarm.values()].sort(
    (a, b) =>
      PRIORITY_RANK[priorityOf(a)] - PRIORITY_RANK[priorityOf(b)] ||
      (a.alarm?.raisedAt ?? 0) - (b.alarm?.raisedAt ?? 0) ||
      a.alarmId - b.alarmId,
  );
}

function composeSubject(entries: readonly Entry[], ctx: NoticeComposeContext): { subject: string; top: Priority } {
  const top = entries.length > 0 ? priorityOf(entries[0]!) : 'system';
  const prefix = `${PRIORITY_TAG[top]} ${ctx.siteName}: `;
  const label = (e: Entry) => (e.alarm ? labelOf(e.alarm, ctx) : `Alarm #${e.alarmId}`);
  if (entries.length === 1) return { subject: `${prefix}${label(entries[0]!)} — ${phrase(entries[0]!)}`, top };
  let subject = `${prefix}${entries.length} conditions — `;
  for (let i = 0; i < entries.length; i++) {
    const item = `${label(entries[i]!)} ${phrase(entries[i]!, true)}`;
    const rest = entries.length - i - 1;
    const tail = rest > 0 ? `, and ${rest} more` : '';
    const candidate = `${subject}${i > 0 ? ', ' : ''}${item}`;
    if (i > 0 && candidate.length + tail.length > SUBJECT_MAX) {
      subject += `, and ${entries.length - i} more`;
      break;
    }
    subject = candidate;
  }
  return { subject, top };
}

interface EntryFacts {
  title: string;
  rows: Array<{ label: string; value: string }>;
  link: string | null;
}

/** The facts of one entry as label/value rows, shared by the text and HTML bodies. */
function entryFacts(entry: Entry, digest: Digest, ctx: NoticeComposeContext): EntryFacts {
  const alarm = entry.alarm;
  if (!alarm) {
    return {
      title: `Alarm #${entry.alarmId}`,
      rows: [{ label: 'Note', value: 'This alarm is no longer on record; see the board for the current state.' }],
      link: null,
    };
  }
  const rows: EntryFacts['rows'] = [];
  const loop = ctx.loops.find((l) => l.id === alarm.loopId);
  if (loop?.location) rows.push({ label: 'Where', value: loop.location });
  if (alarm.loopId && alarm.loopId !== loop?.name) rows.push({ label: 'Loop', value: alarm.loopId });
  const text = CONDITION_TEXT[alarm.condition];
  rows.push({ label: 'What it means', value: text.words });
  rows.push({ label: 'What to check', value: checkAdvice(alarm.condition, linkOf(alarm, ctx)) });
  rows.push({ label: 'Since', value: `${formatSiteAndUtc(alarm.raisedAt, ctx.timeZone)}, ${formatElapsed(ctx.now - alarm.raisedAt)} ago` });

  const kind = entry.last.kind;
  if (kind === 'escalated') rows.push({ label: 'Why you', value: 'Nobody has acknowledged this yet, so you are now told too.' });
  if (kind === 'repeat') rows.push({ label: 'Reminder', value: `Still not acknowledged after ${formatElapsed(ctx.now - alarm.raisedAt)}.` });

  if (alarm.ackedAt !== null || kind === 'acknowledged') {
    const by = actorOf(entry.last, alarm) ?? 'someone';
    const at = alarm.ackedAt !== null ? ` at ${formatSiteAndUtc(alarm.ackedAt, ctx.timeZone)}` : '';
    rows.push({ label: 'Acknowledged', value: `by ${by}${at}` });
    const note = entry.last.kind === 'acknowledged' ? (entry.last.note ?? alarm.note) : alarm.note;
    rows.push({ label: 'Their note', value: note && note.trim() ? quoted(note) : '(none)' });
  }
  if (alarm.clearedAt !== null) rows.push({ label: 'Back to normal', value: formatSiteAndUtc(alarm.clearedAt, ctx.timeZone) });
  if (alarm.state === 'shelved' && alarm.shelvedUntil !== null) {
    const by = kind === 'shelved' && entry.last.actor ? ` by ${entry.last.actor}` : '';
    const reason = alarm.shelveReason ? `: ${quoted(alarm.shelveReason)}` : '';
    rows.push({ label: 'Shelved', value: `until ${formatSiteAndUtc(alarm.shelvedUntil, ctx.timeZone)}${by}${reason}` });
  }
  rows.push({ label: 'Status', value: statusWords(alarm) });

  const others = (ctx.recipients.get(alarm.id) ?? []).filter((id) => id !== digest.contactId);
  const names = others.map((id) => ctx.contacts.find((c) => c.id === id)?.name ?? id);
  rows.push({ label: 'Also told', value: names.length > 0 ? names.join(', ') : 'nobody else so far' });

  let link: string | null = null;
  if (ctx.ack && STATES_WITH_ACK_LINK.has(alarm.state)) {
    const token = signAckToken({ alarmId: alarm.id, contactId: digest.contactId, expiresAt: ctx.now + ctx.ack.ttlMs, tokenId: ctx.ack.newTokenId() }, ctx.ack.secret);
    link = `${ctx.publicUrl}/ack/${token}`;
  }
  return { title: `${labelOf(alarm, ctx)} — ${phrase(entry)}`, rows, link };
}

/**
 * A person's words inside the mail, always between quotation marks and on the line they started on, so
 * text someone typed can never pass for a line of the monitor's own (the web boundary already folds
 * line breaks; this also covers rows stored before it did).
 */
function quoted(text: string): string {
  return `“${text.replace(/[\r\n\u2028\u2029]+/g, ' ')}”`;
}

function statusWords(alarm: NoticeAlarm): string {
  const standing = alarmStanding(alarm.state, alarm.active);
  switch (standing) {
    case 'shelved':
      return `${STANDING_WORDS.shelved} (hidden for a while, comes back by itself)`;
    case 'out-of-service':
      return `loop ${STANDING_WORDS['out-of-service']}`;
    case 'closed':
      return `${STANDING_WORDS.closed}: back to normal and acknowledged`;
    default:
      return STANDING_WORDS[standing];
  }
}

const LABEL_WIDTH = 16;

function textBlock(facts: EntryFacts): string {
  const lines = [facts.title];
  for (const row of facts.rows) lines.push(`  ${`${row.label}:`.padEnd(LABEL_WIDTH)}${row.value}`);
  if (facts.link) lines.push(`  ${'Acknowledge:'.padEnd(LABEL_WIDTH)}${facts.link}`);
  return lines.join('\n');
}

function htmlBlock(facts: EntryFacts): string {
  const rows = facts.rows
    .map(
      (row) =>
        `<tr><th style="text-align:left;vertical-align:top;padding:2px 12px 2px 0;white-space:nowrap">${escapeHtml(row.label)}</th><td style="padding:2px 0">${escapeHtml(row.value)}</td></tr>`,
    )
    .join('');
  const link = facts.link
    ? `<p><a href="${escapeHtml(facts.link)}" style="display:inline-block;padding:12px 20px;border:2px solid #111;border-radius:6px;color:#111;font-weight:bold;text-decoration:none">Acknowledge…</a><br><small>Opens a page where you confirm; opening the link alone changes nothing.</small></p>`
    : '';
  return `<div style="border-left:4px solid #111;padding:0 0 0 12px;margin:0 0 20px"><h3 style="margin:8px 0">${escapeHtml(facts.title)}</h3><table style="border-collapse:collapse">${rows}</table>${link}</div>`;
}

/** Pure: one mail for one contact's digest. Sections keep alarm, trouble and system apart. */
export function composeNoticeMail(digest: Digest, ctx: NoticeComposeContext): OutboxMessage {
  const contact = ctx.contacts.find((c) => c.id === digest.contactId);
  if (!contact) throw new RangeError(`no contact has id "${digest.contactId}"`);
  const entries = buildEntries(digest, ctx);
  const { subject, top } = composeSubject(entries, ctx);

  const textParts: string[] = [subject, ''];
  const htmlParts: string[] = [`<h1 style="font-size:20px;margin:0 0 16px">${escapeHtml(subject)}</h1>`];
  for (const priority of ['alarm', 'trouble', 'system'] as const) {
    const inSection = entries.filter((e) => priorityOf(e) === priority);
    if (inSection.length === 0) continue;
    const heading = `${PRIORITY_HEADING[priority]} (${inSection.length})`;
    textParts.push(heading, '='.repeat(heading.length), '');
    htmlParts.push(`<h2 style="font-size:18px;margin:20px 0 8px">${escapeHtml(heading)}</h2>`);
    for (const entry of inSection) {
      const facts = entryFacts(entry, digest, ctx);
      textParts.push(textBlock(facts), '');
      htmlParts.push(htmlBlock(facts));
    }
  }
  // --- reply to acknowledge (mail.imap) ---
  const messageId = ctx.newMessageId();
  const reply = ctx.reply && entries.some((e) => e.alarm && STATES_WITH_ACK_LINK.has(e.alarm.state)) ? ctx.reply : null;
  let replySubject = subject;
  let replyTo: string | null = null;
  if (reply) {
    // The token rides in the subject as well as the body, so a reply whose client trims the quote still carries it.
    const token = signReplyToken({ messageId, recipient: contact.id, expiresAt: ctx.now + reply.ttlMs }, reply.secret);
    replySubject = `${subject} [ref ${token}]`;
    // With reply_tag the token is also the address's subaddress (RFC 5233), for clients that rewrite the subject too.
    replyTo = reply.tagAddress ? reply.address.replace(/@/, `+${token}@`) : reply.address;
    textParts.push(REPLY_HINT, `Reference: ${token}`, '');
    htmlParts.push(`<p><strong>${escapeHtml(REPLY_HINT)}</strong><br><small>Reference: ${token}</small></p>`);
  }
  // --- end reply to acknowledge ---
  textParts.push(mailFooterText(ctx.siteName, ctx.publicUrl, !!ctx.reply));
  htmlParts.push(mailFooterHtml(ctx.siteName, ctx.publicUrl, !!ctx.reply));

  const headers: Record<string, string> = { 'Auto-Submitted': 'auto-generated' };
  if (replyTo) headers['Reply-To'] = replyTo;
  const threads = [...new Set(entries.map((e) => e.alarm?.threadMessageId).filter((id): id is string => !!id))];
  if (threads.length > 0) {
    // RFC 5322 §3.6.4: In-Reply-To names the parent(s); References carries the thread. The parent is
    // each alarm's first mail, which has no References of its own, so both fields hold the same ids.
    headers['In-Reply-To'] = threads.join(' ');
    headers['References'] = threads.join(' ');
  }
  return {
    messageId,
    kind: 'notice',
    priority: top,
    from: ctx.from,
    to: [mailbox(contact)],
    subject: replySubject,
    text: textParts.join('\n'),
    html: mailPageHtml(subject, htmlParts.join('\n')),
    headers,
    alarmIds: entries.map((e) => e.alarmId),
    // Only a repeat or an escalation: says nothing new, so the outbox may drop it once it is obsolete.
    reminder: digest.notices.length > 0 && digest.notices.every((n) => n.kind === 'repeat' || n.kind === 'escalated'),
  };
}
