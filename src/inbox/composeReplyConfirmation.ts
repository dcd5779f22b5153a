import { escapeHtml, mailPageHtml } from '../notify/mailLayout.js';
import type { OutboxMessage } from '../model/outboxMessage.js';

/** What the monitor answers a verified reply with: one line per alarm the reply was about. */
export interface ReplyConfirmation {
  /** The replier's address. */
  to: string;
  /** The reply's own Message-ID and thread, so the answer sits under it (RFC 5322 §3.6.4). */
  replyMessageId: string | null;
  replyReferences: readonly string[];
  replySubject: string;
  lines: readonly string[];
  alarmIds: readonly number[];
}

export interface ConfirmationEnvelope {
  siteName: string;
  from: string;
  publicUrl: string;
  newMessageId: () => string;
}

/**
 * Pure. Marked `Auto-Submitted: auto-replied` (RFC 3834 §5) so the replier's own responder does not
 * answer it in turn, and threaded under the reply.
 */
export function composeReplyConfirmation(confirmation: ReplyConfirmation, envelope: ConfirmationEnvelope): OutboxMessage {
  // The spent token's tag is left off: the confirmation is not itself something to reply to.
  const base = confirmation.replySubject.replace(/^\s*((re|aw|sv|antw|réf)\s*:\s*)+/i, '').replace(/\s*\[ref pw-[0-9a-z-]+\]/gi, '');
  const subject = `Re: ${base}`.slice(0, 300);
  const headers: Record<string, string> = { 'Auto-Submitted': 'auto-replied' };
  if (confirmation.replyMessageId) {
    headers['In-Reply-To'] = confirmation.replyMessageId;
    headers['References'] = [...confirmation.replyReferences, confirmation.replyMessageId].join(' ');
  }
  const footer = `-- \npairwatch at ${envelope.siteName}. The board: ${envelope.publicUrl}/`;
  return {
    messageId: envelope.newMessageId(),
    kind: 'reply-confirmation',
    priority: null,
    from: envelope.from,
    to: [confirmation.to],
    subject,
    text: [...confirmation.lines, '', footer].join('\n'),
    html: mailPageHtml(subject, `${confirmation.lines.map((l) => `<p>${escapeHtml(l)}</p>`).join('\n')}\n<hr><p><small>pairwatch at ${escapeHtml(envelope.siteName)}</small></p>`),
    headers,
    alarmIds: [...confirmation.alarmIds],
  };
}
