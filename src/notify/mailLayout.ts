import type { Priority } from '../model/condition.js';

/** Subject tags: the priority in words, first thing in every subject line. */
export const PRIORITY_TAG = { alarm: '[ALARM]', trouble: '[TROUBLE]', system: '[SYSTEM]' } as const satisfies Record<Priority, string>;

export const PRIORITY_HEADING = { alarm: 'ALARM', trouble: 'TROUBLE', system: 'SYSTEM TROUBLE' } as const satisfies Record<Priority, string>;

/** Said wherever users read mail from the monitor. */
export const SAFETY_CAUTION =
  'pairwatch is property monitoring, not a life-safety system: it does not replace fire, gas or medical alarms.';

/** `repliesRead`: mail.imap is set, so the footer must not say replies go unread. */
export function mailFooterText(siteName: string, publicUrl: string, repliesRead = false): string {
  return [
    '--',
    `Sent automatically by pairwatch at ${siteName}; ${repliesRead ? 'a reply is read by the monitor, not by a person' : 'replies are not read'}.`,
    `The board: ${publicUrl}/`,
    SAFETY_CAUTION,
  ].join('\n');
}

export function mailFooterHtml(siteName: string, publicUrl: string, repliesRead = false): string {
  return `<hr><p style="font-size:13px;color:#333">Sent automatically by pairwatch at ${escapeHtml(siteName)}; ${repliesRead ? 'a reply is read by the monitor, not by a person' : 'replies are not read'}.<br>The board: <a href="${escapeHtml(publicUrl)}/">${escapeHtml(publicUrl)}/</a><br>${escapeHtml(SAFETY_CAUTION)}</p>`;
}

/** A whole HTML document around already-escaped body markup. */
export function mailPageHtml(title: string, bodyHtml: string): string {
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><title>${escapeHtml(title)}</title></head>
<body style="font-family:Arial,Helvetica,sans-serif;font-size:16px;line-height:1.45;color:#111;background:#fff;max-width:42em;margin:0;padding:12px">
${bodyHtml}
</body></html>
`;
}

const HTML_ESCAPES: Record<string, string> = {
  '&': '&amp;',
  '<': '&lt;',
  '>': '&gt;',
  '"': '&quot;',
  "'": '&#39;',
};

/** Escapes text for HTML element content and quoted attribute values. Every user-supplied string goes through this. */
export function escapeHtml(text: string): string {
  return text.replace(/[&<>"']/g, (ch) => HTML_ESCAPES[ch]!);
}
