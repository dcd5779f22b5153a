import type { ParsedMail } from 'mailparser';
import type { AuthVerdict, ParsedReply } from './parsedReply.js';

const MESSAGE_ID = /<[^<>\s]+>/g;
const REPORT_PARTS = new Set(['message/delivery-status', 'message/global-delivery-status', 'text/rfc822-headers', 'message/rfc822', 'message/global-headers']);

/** mailparser's result as the plain data the reply decision takes. */
export function toParsedReply(mail: ParsedMail, auth: AuthVerdict): ParsedReply {
  const headers = new Map<string, string[]>();
  for (const { key, line } of mail.headerLines) {
    const value = line.slice(line.indexOf(':') + 1).replace(/\r?\n[ \t]+/g, ' ').trim();
    const list = headers.get(key.toLowerCase()) ?? [];
    list.push(value);
    headers.set(key.toLowerCase(), list);
  }
  const ids = (name: string) => (headers.get(name) ?? []).flatMap((v) => v.match(MESSAGE_ID) ?? []);
  const contentType = mail.headers.get('content-type') as { value?: string; params?: Record<string, string> } | undefined;
  const fromAddress = mail.from?.value[0]?.address;
  return {
    messageId: mail.messageId ?? null,
    from: fromAddress ? fromAddress.toLowerCase() : null,
    subject: mail.subject ?? '',
    inReplyTo: ids('in-reply-to'),
    references: ids('references'),
    headers,
    contentType: (contentType?.value ?? 'text/plain').toLowerCase(),
    reportType: contentType?.params?.['report-type']?.toLowerCase() ?? null,
    text: mail.text ?? '',
    attachedText: mail.attachments
      .filter((a) => REPORT_PARTS.has(a.contentType.toLowerCase()))
      .map((a) => a.content.subarray(0, 64 * 1024).toString('utf8'))
      .join('\n'),
    auth,
  };
}
