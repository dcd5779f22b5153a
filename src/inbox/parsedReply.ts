/**
 * A received message as the reply decision sees it: plain data, no parser objects, so the decision is
 * a pure function and its tests can build messages by hand. The shell fills it from mailparser.
 */
export interface ParsedReply {
  /** With angle brackets, as in the header; null when the message has none. */
  messageId: string | null;
  /** The From address, lower-cased; null when missing or unreadable. */
  from: string | null;
  subject: string;
  /** Message-IDs from In-Reply-To and References (RFC 5322 §3.6.4), with angle brackets, in header order. */
  inReplyTo: readonly string[];
  references: readonly string[];
  /** Header values by lower-case field name, unfolded; a field may occur more than once. */
  headers: ReadonlyMap<string, readonly string[]>;
  /** Top-level media type, lower-case (e.g. `multipart/report`), and its report-type parameter. */
  contentType: string;
  reportType: string | null;
  /** The plain-text body, quoted text included. */
  text: string;
  /**
   * Text of the parts a mail system attaches when it reports on a message: message/delivery-status,
   * text/rfc822-headers, message/rfc822 (RFC 3464 §2, RFC 6522). A bounce names our mail only there.
   */
  attachedText: string;
  auth: AuthVerdict;
}

export const DKIM_RESULTS = ['pass', 'fail', 'none', 'temperror', 'permerror', 'neutral', 'policy'] as const;
export type DkimResult = (typeof DKIM_RESULTS)[number];

/** What is known about who really sent the message; goes into the audit. */
export interface AuthVerdict {
  dkim: DkimResult;
  /** One line for the audit, e.g. `DKIM pass (example.org) by mailauth; Authentication-Results mx.example.net: dkim=pass spf=pass dmarc=pass`. */
  summary: string;
}

export function headerValues(reply: ParsedReply, name: string): readonly string[] {
  return reply.headers.get(name.toLowerCase()) ?? [];
}
