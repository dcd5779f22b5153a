import type { Priority } from './condition.js';

/** What a mail in the outbox is for. */
export const OUTBOX_KINDS = ['notice', 'daily-report', 'lifecycle', 'test', 'reply-confirmation'] as const;
export type OutboxKind = (typeof OUTBOX_KINDS)[number];

/**
 * One composed mail, ready for the outbox. The Message-ID is fixed here, once, so every retry of the
 * row is the same message to the receiving side (RFC 5322 §3.6.4: one identifier per message).
 */
export interface OutboxMessage {
  messageId: string;
  kind: OutboxKind;
  /** Highest priority the mail is about; null for mail that is not about a condition (a test). */
  priority: Priority | null;
  from: string;
  /** Addresses as `Name <addr@example.org>` or bare addresses. */
  to: string[];
  subject: string;
  text: string;
  html: string;
  /** Extra header fields (Auto-Submitted, In-Reply-To, References). */
  headers: Record<string, string>;
  /** Alarms this mail is about; audit rows for sending go against each. */
  alarmIds: number[];
  /**
   * The mail only repeats or escalates what was already said (repeat and escalation notices). Such a
   * mail is obsolete, and dropped unsent with an audit row, once none of its alarms still waits for an
   * acknowledgement. Default false.
   */
  reminder?: boolean;
}

/** Who a non-notice mail (report, lifecycle, test) goes from and to, and where its Message-ID comes from. */
export interface MailEnvelope {
  from: string;
  to: string[];
  newMessageId: () => string;
}
