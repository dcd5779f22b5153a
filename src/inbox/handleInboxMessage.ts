import { createHash } from 'node:crypto';
import { simpleParser } from 'mailparser';
import type { Logger } from 'pino';
import type { AlarmInput, AlarmStepResult } from '../alarms/alarmInput.js';
import type { SiteConfig } from '../config/schema.js';
import { CONDITION_SHORT } from '../notify/composeNoticeMail.js';
import { formatSiteAndUtc } from '../notify/formatSiteTime.js';
import { publicUrlFor, replyAddressFor } from '../notify/noticeSettings.js';
import { findReplyTokens } from '../notify/replyToken.js';
import { ackTokenUsedAt, markAckTokenUsed } from '../store/alarmRepo.js';
import { advanceInboxOffset, findInboxMessage, recordInboxMessage } from '../store/inboxRepo.js';
import type { Store } from '../store/openStore.js';
import { enqueueOutbox, getOutboxRowByMessageId } from '../store/outboxRepo.js';
import { findUserByName } from '../store/accountRepos.js';
import type { DurableWriter } from '../store/createDurableWriter.js';
import type { DNSResolver } from 'mailauth';
import { readAuthVerdict } from './authVerdict.js';
import { composeReplyConfirmation, type ReplyConfirmation } from './composeReplyConfirmation.js';
import { decideReply, type KnownMail, type ReplyDecision } from './decideReply.js';
import type { ParsedReply } from './parsedReply.js';
import { toParsedReply } from './toParsedReply.js';

/**
 * The shell around decideReply for one fetched message: parse, gather what the decision needs from
 * the store, decide, and commit the outcome together with the mailbox offset in one transaction.
 * What the mailbox should show afterwards (`mark`) is left to the watcher.
 */
export interface FetchedMessage {
  folder: string;
  uidValidity: number;
  uid: number;
  source: Buffer;
}

/** handled: mark as read (or move to done_folder); flag: leave for a person; none: not ours, untouched. */
export type InboxMark = 'handled' | 'flag' | 'none';

export interface InboxOutcome {
  messageKey: string;
  mark: InboxMark;
  decision: ReplyDecision | { verdict: 'duplicate' };
}

export interface AlarmActionsPort {
  /** What it returns is not read here: the reply's own rows are written inside `alongside`, or not at all. */
  alarmActionsWith(inputs: readonly AlarmInput[], now: number, label: string, alongside: (s: Store, results: readonly AlarmStepResult[]) => void): unknown;
}

export interface ReplyHandlerOptions {
  config: SiteConfig;
  store: Store;
  writer: DurableWriter;
  core: AlarmActionsPort;
  secret: Buffer;
  newMessageId: () => string;
  /** `pairwatch.<domain>`, the right-hand side of our Message-IDs. */
  ownMessageIdDomain: string;
  now: () => number;
  logger: Logger;
  /** DNS for DKIM keys (tests). */
  resolver?: DNSResolver;
  /** Told when a verified reply to a `mail-test` message arrived. */
  onTestReply?: (from: string, words: string) => void;
}

const MARK_OF = { 'not-ours': 'none', refused: 'flag', acknowledge: 'handled', shelve: 'handled', 'test-reply': 'handled' } as const;

function addressOf(text: string): string {
  return (/<([^<>]+)>\s*$/.exec(text)?.[1] ?? text).trim().toLowerCase();
}

export function createReplyHandler(options: ReplyHandlerOptions) {
  const { config, store, writer, core, logger } = options;
  const imap = config.mail.imap;
  const ownAddresses = [addressOf(config.mail.from), replyAddressFor(config).toLowerCase()];
  const envelope = { siteName: config.site.name, from: config.mail.from, publicUrl: publicUrlFor(config.web), newMessageId: options.newMessageId };
  const tz = config.site.timezone;

  const labelOf = (alarmId: number): string => {
    const alarm = store.alarms.get(alarmId);
    if (!alarm) return `Alarm #${alarmId}`;
    const loop = alarm.loopId ? config.loops.find((l) => l.id === alarm.loopId) : undefined;
    return `${loop?.name ?? (alarm.source === 'system' ? 'Monitor' : alarm.source)}: ${CONDITION_SHORT[alarm.condition]}`;
  };

  function contextFor(reply: ParsedReply, now: number) {
    const knownMails = new Map<string, KnownMail>();
    for (const id of new Set([...reply.inReplyTo, ...reply.references])) {
      const row = getOutboxRowByMessageId(store.db, id);
      if (row && row.kind === 'notice') knownMails.set(id, { messageId: row.messageId, kind: row.kind, alarmIds: row.alarmIds });
    }
    const spentTokens = new Set<string>();
    for (const token of findReplyTokens(`${reply.subject}\n${reply.text}`)) {
      const key = `reply-${token}`;
      if (ackTokenUsedAt(store.db, key) !== null) spentTokens.add(key);
    }
    const shelvers = new Set<string>();
    for (const contact of config.contacts) {
      if (!contact.user) continue;
      const role = findUserByName(store.db, contact.user)?.role;
      if (role === 'operator' || role === 'admin') shelvers.add(contact.id);
    }
    return {
      now,
      secret: options.secret,
      contacts: config.contacts,
      ownAddresses,
      ownMessageIdDomain: options.ownMessageIdDomain,
      knownMails,
      spentTokens,
      shelvers,
      requireDkim: imap?.require_dkim ?? false,
      maxShelveMs: config.web.max_shelve,
    };
  }

  async function handle(message: FetchedMessage): Promise<InboxOutcome> {
    const parsed = await simpleParser(message.source);
    const from = parsed.from?.value[0]?.address?.toLowerCase() ?? null;
    const topAr = parsed.headerLines.find((h) => h.key === 'authentication-results');
    const auth = await readAuthVerdict(message.source, from, topAr ? topAr.line.slice(topAr.line.indexOf(':') + 1).trim() : null, {
      ...(options.resolver ? { resolver: options.resolver } : {}),
      now: options.now(),
    });
    const reply = toParsedReply(parsed, auth);
    const messageKey = reply.messageId ?? `sha256:${createHash('sha256').update(message.source).digest('hex')}`;
    const now = options.now();
    const offset = { uidValidity: message.uidValidity, lastUid: message.uid };
    const base = { messageKey, folder: message.folder, uidValidity: message.uidValidity, uid: message.uid, handledAt: now };

    const earlier = findInboxMessage(store.db, messageKey);
    if (earlier) {
      // The same Message-ID again (a copy, a resend, a rebuilt mailbox): decided once, never acted on twice.
      writer.commit('inbox offset', (s) => advanceInboxOffset(s.db, message.folder, offset, now));
      logger.info({ messageKey, uid: message.uid, earlier: earlier.verdict }, 'reply inbox: a message already handled arrived again; ignored');
      return { messageKey, mark: earlier.verdict === 'refused' ? 'flag' : 'handled', decision: { verdict: 'duplicate' } };
    }

    const decision = decideReply(reply, contextFor(reply, now));
    const confirmTo = (lines: string[], alarmIds: readonly number[]): ReplyConfirmation => ({
      to: reply.from ?? '',
      replyMessageId: reply.messageId,
      replyReferences: reply.references,
      replySubject: reply.subject,
      lines,
      alarmIds,
    });

    switch (decision.verdict) {
      case 'not-ours':
        writer.commit('inbox offset', (s) => advanceInboxOffset(s.db, message.folder, offset, now));
        break;
      case 'refused':
        logger.warn({ messageKey, from: reply.from, reason: decision.reason, auth: auth.summary }, `reply inbox: not acted on (${decision.reason}): ${decision.detail}; left flagged for a person`);
        writer.commit('inbox refused', (s) => {
          recordInboxMessage(s.db, { ...base, verdict: 'refused', detail: `${decision.reason}: ${decision.detail}` });
          advanceInboxOffset(s.db, message.folder, offset, now);
        });
        break;
      case 'test-reply':
        writer.commit('inbox test reply', (s) => {
          if (!markAckTokenUsed(s.db, decision.tokenKey, now)) return;
          recordInboxMessage(s.db, { ...base, verdict: 'test-reply', detail: `from ${decision.from}` });
          advanceInboxOffset(s.db, message.folder, offset, now);
          const lines = [
            `Your reply to the pairwatch test message reached the monitor at ${config.site.name} (${formatSiteAndUtc(now, tz)}).`,
            `From: ${decision.from}. First words: "${decision.words || '(none)'}". Sender check: ${auth.summary}.`,
            'A reply like this to an alarm mail, starting with OK, acknowledges the alarm.',
          ];
          enqueueOutbox(s.db, composeReplyConfirmation(confirmTo(lines, []), envelope), now);
        });
        logger.info({ from: decision.from, words: decision.words, auth: auth.summary }, `reply inbox: test reply from ${decision.from} received`);
        options.onTestReply?.(decision.from, decision.words);
        break;
      case 'acknowledge':
      case 'shelve': {
        const actor = `${decision.contact.name} (mail reply)`;
        const alarmIds = decision.mail.alarmIds;
        const inputs: AlarmInput[] =
          decision.verdict === 'acknowledge'
            ? alarmIds.map((alarmId) => ({ kind: 'ack', alarmId, actor, note: decision.note }))
            : alarmIds.map((alarmId) => ({ kind: 'shelve', alarmId, actor, durationMs: decision.durationMs, reason: decision.reason }));
        const detail =
          decision.verdict === 'acknowledge'
            ? `acknowledge by ${decision.contact.id}${decision.note ? `, note: ${decision.note}` : ''}`
            : `shelve by ${decision.contact.id} for ${Math.round(decision.durationMs / 60_000)} min: ${decision.reason}`;
        core.alarmActionsWith(inputs, now, `mail reply ${decision.verdict}`, (s, results) => {
          // The token may have been spent by a transaction queued before this one; then this reply is a replay.
          if (!markAckTokenUsed(s.db, decision.tokenKey, now)) return;
          recordInboxMessage(s.db, { ...base, verdict: decision.verdict, detail });
          advanceInboxOffset(s.db, message.folder, offset, now);
          const lines: string[] = [];
          results.forEach((result, i) => {
            const alarmId = alarmIds[i]!;
            const alarm = s.alarms.get(alarmId);
            s.audit.insert({ at: now, actor, action: 'mail-reply', alarmId, loopId: alarm?.loopId ?? null, note: `reply ${messageKey} from ${reply.from}; ${auth.summary}` });
            if (!result.error) {
              if (decision.verdict === 'acknowledge') lines.push(`Acknowledged: ${labelOf(alarmId)}. ${decision.note ? `Your note: "${decision.note}".` : 'No note.'}`);
              else lines.push(`Shelved: ${labelOf(alarmId)} until ${formatSiteAndUtc(now + decision.durationMs, tz)} (${decision.reason}).${decision.capped ? ' That is the longest web.max_shelve allows.' : ''}`);
            } else if (alarm?.ackedBy && alarm.ackedAt !== null) {
              lines.push(`${labelOf(alarmId)} was already acknowledged by ${alarm.ackedBy} at ${formatSiteAndUtc(alarm.ackedAt, tz)}. Your reply changed nothing.`);
            } else {
              lines.push(`${labelOf(alarmId)}: nothing done: ${result.error.message}.`);
            }
          });
          if (results.some((r) => !r.error) && decision.verdict === 'acknowledge') lines.push('Everyone else who was told about it hears that you acknowledged.');
          enqueueOutbox(s.db, composeReplyConfirmation(confirmTo(lines, alarmIds), envelope), now);
        });
        logger.info({ messageKey, contact: decision.contact.id, alarmIds, auth: auth.summary }, `reply inbox: ${detail}`);
        break;
      }
    }
    return { messageKey, mark: MARK_OF[decision.verdict], decision };
  }

  return { handle };
}

export type ReplyHandler = ReturnType<typeof createReplyHandler>;
