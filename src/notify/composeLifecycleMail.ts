import { countOf } from '../model/plural.js';
import { formatSiteAndUtc } from './formatSiteTime.js';
import { escapeHtml, mailFooterHtml, mailFooterText, mailPageHtml, PRIORITY_TAG } from './mailLayout.js';
import type { MailEnvelope, OutboxMessage } from '../model/outboxMessage.js';

export type LifecycleEvent = 'started' | 'stopped';

export interface LifecycleData {
  siteName: string;
  timeZone: string;
  publicUrl: string;
  at: number;
  loopCount: number;
  decoderCount: number;
  /** When the next daily report is due (started), null when no report is configured. */
  nextReportAt: number | null;
  /** Why it stopped, e.g. "stopped by the service manager (SIGTERM)". */
  reason?: string | null;
  version?: string | null;
}

/** Pure: "monitoring started" / "monitoring stopped on purpose". A crash sends nothing; the missing daily report tells. */
export function composeLifecycleMail(event: LifecycleEvent, data: LifecycleData, ctx: MailEnvelope): OutboxMessage {
  const when = formatSiteAndUtc(data.at, data.timeZone);
  const version = data.version ? ` ${data.version}` : '';
  const subject =
    event === 'started'
      ? `${PRIORITY_TAG.system} ${data.siteName}: monitoring started`
      : `${PRIORITY_TAG.system} ${data.siteName}: monitoring stopped on purpose`;
  const lines =
    event === 'started'
      ? [
          `pairwatch${version} started at ${when}.`,
          `It watches ${countOf(data.loopCount, 'loop')} on ${countOf(data.decoderCount, 'decoder')}.`,
          data.nextReportAt !== null
            ? `The next daily report is due ${formatSiteAndUtc(data.nextReportAt, data.timeZone)}.`
            : 'No daily report is configured (report.notify is empty).',
        ]
      : [
          `pairwatch${version} was stopped on purpose at ${when}${data.reason ? ` (${data.reason})` : ''}.`,
          `${data.loopCount === 1 ? 'Its 1 loop is' : `Its ${data.loopCount} loops are`} NOT watched until it is started again: no alarms, no daily report.`,
        ];

  const text = [subject, '', ...lines, '', mailFooterText(data.siteName, data.publicUrl)].join('\n');
  const html = mailPageHtml(
    subject,
    [`<h1 style="font-size:20px">${escapeHtml(subject)}</h1>`, ...lines.map((l) => `<p>${escapeHtml(l)}</p>`), mailFooterHtml(data.siteName, data.publicUrl)].join('\n'),
  );
  return {
    messageId: ctx.newMessageId(),
    kind: 'lifecycle',
    priority: 'system',
    from: ctx.from,
    to: [...ctx.to],
    subject,
    text,
    html,
    headers: { 'Auto-Submitted': 'auto-generated' },
    alarmIds: [],
  };
}
