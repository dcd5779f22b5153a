import type { Priority } from '../model/condition.js';
import { CONDITION_TEXT } from '../model/condition.js';
import type { EventPayload } from '../mqtt/sitePayloads.js';
import { escapeHtml } from '../notify/escapeHtml.js';
import type { OutboxMessage } from '../notify/outboxMessage.js';

/**
 * The estate's two mails, composed as plain data for the outbox: a site stopped (or started again)
 * reporting, and a site raised an alarm or trouble. Each points to the site's own pages for acting.
 */
export interface EstateEnvelope {
  from: string;
  to: string[];
  messageId: string;
}

const CAUTION = 'pairwatch watches property; it is not a life-safety system.';

function message(envelope: EstateEnvelope, priority: Priority | null, subject: string, lines: string[]): OutboxMessage {
  const text = [...lines, '', CAUTION, ''].join('\n');
  const html = `<!doctype html><html><body>${lines.map((l) => `<p>${escapeHtml(l)}</p>`).join('')}<p><small>${escapeHtml(CAUTION)}</small></p></body></html>`;
  return { messageId: envelope.messageId, kind: 'notice', priority, from: envelope.from, to: envelope.to, subject, text, html, headers: { 'Auto-Submitted': 'auto-generated' }, alarmIds: [] };
}

export function composeReportingMail(
  site: { name: string; url: string | null },
  reporting: boolean,
  lastSpokeMs: number | null,
  reason: string | null,
  envelope: EstateEnvelope,
): OutboxMessage {
  const spoke = lastSpokeMs === null ? 'It has not been heard from since the estate board started.' : `It last spoke at ${new Date(lastSpokeMs).toISOString()}.`;
  return reporting
    ? message(envelope, null, `${site.name}: reporting again`, [`${site.name} is reporting to the estate again.`, ...(site.url ? [`Its own pages: ${site.url}`] : [])])
    : message(envelope, 'system', `${site.name}: site not reporting`, [
        `${site.name} is not reporting to the estate${reason ? ` (${reason})` : ''}.`,
        spoke,
        'Its alarms cannot be seen from here until it reports again. Check the site monitor, its power and its network link.',
        ...(site.url ? [`Its own pages: ${site.url}`] : []),
      ]);
}

export function composeSiteAlarmMail(site: { name: string; url: string | null }, event: EventPayload, envelope: EstateEnvelope): OutboxMessage {
  const { alarm } = event;
  const what = CONDITION_TEXT[alarm.condition];
  return message(envelope, alarm.priority, `${site.name}: ${alarm.priority} — ${what.words.split(':')[0]}${alarm.loopId ? ` (${alarm.loopId})` : ''}`, [
    `${site.name} raised ${alarm.priority === 'alarm' ? 'an alarm' : alarm.priority === 'trouble' ? 'trouble' : 'system trouble'} at ${event.at}: ${what.words}.`,
    what.check,
    site.url ? `Acknowledge on the site's own pages: ${site.url}` : 'Acknowledge on the site\'s own pages.',
  ]);
}

/** Several alarms within the grouping window: one mail listing them all, worst first as the board does. */
export function composeAlarmDigestMail(items: ReadonlyArray<{ site: { name: string; url: string | null }; event: EventPayload }>, envelope: EstateEnvelope): OutboxMessage {
  const sites = new Set(items.map((i) => i.site.name));
  const sorted = [...items].sort((a, b) => (a.event.alarm.priority === b.event.alarm.priority ? 0 : a.event.alarm.priority === 'alarm' ? -1 : 1));
  const worst: Priority = sorted[0]?.event.alarm.priority ?? 'trouble';
  return message(envelope, worst, `${items.length} alarms and trouble at ${sites.size} site${sites.size === 1 ? '' : 's'}`, [
    `${items.length} conditions were raised within the grouping window:`,
    ...sorted.map((i) => `${i.site.name}: ${i.event.alarm.priority} — ${CONDITION_TEXT[i.event.alarm.condition].words.split(':')[0]}${i.event.alarm.loopId ? ` (${i.event.alarm.loopId})` : ''} at ${i.event.at}${i.site.url ? ` — ${i.site.url}` : ''}`),
    'Acknowledge each on its site\'s own pages.',
  ]);
}
