import { countOf } from '../model/plural.js';
import type { AlarmState } from '../model/alarmState.js';
import { PRIORITIES, type Condition, type Priority } from '../model/condition.js';
import type { LoopState } from '../model/loopState.js';
import { alarmStanding, STANDING_WORDS } from '../model/alarmStanding.js';
import { CONDITION_SHORT } from './composeNoticeMail.js';
import { formatElapsed, formatSiteAndUtc, formatSiteTime } from './formatSiteTime.js';
import { escapeHtml, mailFooterHtml, mailFooterText, mailPageHtml, PRIORITY_HEADING } from './mailLayout.js';
import type { MailEnvelope, OutboxMessage } from '../model/outboxMessage.js';

export const REPORT_PERIOD_MS = 86_400_000;

/** The sentence that makes the report a proof of life. */
export const REPORT_DEAD_MAN_LINE = 'If this report ever fails to arrive, the monitor itself is down.';

export interface ReportLoop {
  id: string;
  name: string;
  location: string | null;
  state: LoopState;
  sinceMs: number;
  lastPulseAtMs: number | null;
  inService: boolean;
  serviceNote: string | null;
}

export interface ReportAlarm {
  id: number;
  source: string;
  loopId: string | null;
  condition: Condition;
  priority: Priority;
  state: AlarmState;
  raisedAt: number;
  clearedAt: number | null;
  ackedAt: number | null;
  ackedBy: string | null;
  note: string | null;
}

export interface ReportDecoder {
  id: string;
  name: string | null;
  status: 'connecting' | 'connected' | 'disconnected' | 'offline';
  /** How long the decoder was connected and talking during the report period. */
  connectedMsInPeriod: number;
  /** Sessions after the first in the period: the port reconnected or the monitor restarted. */
  restarts: number;
  frames: number;
  badFrames: number;
  lostFrames: number;
}

/** Plain data the daemon gathers for one daily report. Times: epoch ms. */
export interface DailyReportData {
  siteName: string;
  timeZone: string;
  publicUrl: string;
  generatedAt: number;
  /** Default 24 h. */
  periodMs?: number;
  nextReportAt: number;
  monitorStartedAt: number;
  loops: ReportLoop[];
  /** Every alarm raised in the period or still listed at its end. */
  alarms: ReportAlarm[];
  decoders: ReportDecoder[];
  mail: { pending: number; sentInPeriod: number; failedAttemptsInPeriod: number };
}

const LOOP_STATE_WORDS = {
  unknown: 'not yet known',
  healthy: 'healthy',
  tripped: 'TRIPPED',
  open: 'OPEN CIRCUIT',
  shorted: 'SHORT CIRCUIT',
  offline: 'OFFLINE (decoder silent)',
} as const satisfies Record<LoopState, string>;

/** The report knows no `active` flag: an alarm is present while it has no clearedAt (reset when it returns). */
function reportStatusWords(alarm: ReportAlarm): string {
  const standing = alarmStanding(alarm.state, alarm.clearedAt === null);
  return standing === 'out-of-service' ? `loop ${STANDING_WORDS[standing]}` : STANDING_WORDS[standing];
}

/** `24 h` for whole hours, else the usual elapsed form. */
function formatPeriod(ms: number): string {
  return ms > 0 && ms % 3_600_000 === 0 ? `${ms / 3_600_000} h` : formatElapsed(ms);
}

interface Section {
  heading: string;
  lines: string[];
}

function alarmLabel(alarm: ReportAlarm, data: DailyReportData): string {
  if (alarm.loopId) return data.loops.find((l) => l.id === alarm.loopId)?.name ?? `Loop ${alarm.loopId}`;
  if (alarm.source === 'system') return 'Monitor';
  const decoder = data.decoders.find((d) => d.id === alarm.source);
  return `Decoder ${decoder?.name ?? alarm.source}`;
}

function alarmLine(alarm: ReportAlarm, data: DailyReportData): string {
  const tz = data.timeZone;
  const parts = [`${alarmLabel(alarm, data)} — ${CONDITION_SHORT[alarm.condition]}: raised ${formatSiteTime(alarm.raisedAt, tz)}`];
  parts.push(alarm.clearedAt !== null ? `back to normal ${formatSiteTime(alarm.clearedAt, tz)}` : 'still present');
  if (alarm.ackedAt !== null) {
    parts.push(`acknowledged by ${alarm.ackedBy ?? 'someone'} ${formatSiteTime(alarm.ackedAt, tz)}${alarm.note ? ` ("${alarm.note}")` : ''}`);
  }
  parts.push(`now ${reportStatusWords(alarm)}`);
  return parts.join('; ');
}

function loopLine(loop: ReportLoop, data: DailyReportData): string {
  const where = loop.location ? ` (${loop.location})` : '';
  if (!loop.inService) return `${loop.name}${where}: OUT OF SERVICE${loop.serviceNote ? ` — ${loop.serviceNote}` : ''}`;
  const since = `since ${formatSiteTime(loop.sinceMs, data.timeZone)}`;
  const pulse = loop.lastPulseAtMs !== null ? `, last pulse ${formatElapsed(data.generatedAt - loop.lastPulseAtMs)} ago` : '';
  return `${loop.name}${where}: ${LOOP_STATE_WORDS[loop.state]} ${since}${pulse}`;
}

function decoderLine(decoder: ReportDecoder, periodMs: number): string {
  const share = periodMs > 0 ? Math.min(100, (decoder.connectedMsInPeriod / periodMs) * 100) : 0;
  const lostShare = decoder.frames + decoder.lostFrames > 0 ? (decoder.lostFrames / (decoder.frames + decoder.lostFrames)) * 100 : 0;
  return (
    `${decoder.name ?? decoder.id}: ${decoder.status}; connected ${formatElapsed(decoder.connectedMsInPeriod)} of ${formatPeriod(periodMs)} ` +
    `(${share.toFixed(1)} %), ${countOf(decoder.restarts, 'restart')}, ${decoder.frames} frames, ` +
    `${decoder.lostFrames} lost (${lostShare.toFixed(3)} %), ${decoder.badFrames} garbled`
  );
}

function buildSections(data: DailyReportData, periodMs: number): Section[] {
  const sections: Section[] = [];
  sections.push({ heading: `LOOPS NOW (${data.loops.length})`, lines: data.loops.map((l) => loopLine(l, data)) });
  for (const priority of PRIORITIES) {
    const list = data.alarms.filter((a) => a.priority === priority).sort((a, b) => a.raisedAt - b.raisedAt);
    sections.push({
      heading: `${PRIORITY_HEADING[priority]}, LAST ${formatPeriod(periodMs).toUpperCase()} (${list.length})`,
      lines: list.length > 0 ? list.map((a) => alarmLine(a, data)) : ['None.'],
    });
  }
  sections.push({
    heading: `DECODERS (${data.decoders.length})`,
    lines: data.decoders.length > 0 ? data.decoders.map((d) => decoderLine(d, periodMs)) : ['None configured.'],
  });
  sections.push({
    heading: 'MAIL',
    lines: [
      `${data.mail.sentInPeriod} sent, ${countOf(data.mail.failedAttemptsInPeriod, 'failed attempt')} in the period; ${data.mail.pending} waiting in the outbox.`,
    ],
  });
  return sections;
}

function summary(data: DailyReportData): string {
  const active = (p: Priority) => data.alarms.filter((a) => a.priority === p && a.state !== 'normal').length;
  const healthy = data.loops.filter((l) => l.inService && l.state === 'healthy').length;
  const counts = PRIORITIES.map((p) => ({ p, n: active(p) })).filter((x) => x.n > 0);
  if (counts.length === 0 && healthy === data.loops.length) return `all loops healthy (${data.loops.length})`;
  const parts = [`${healthy} of ${data.loops.length} loops healthy`];
  for (const { p, n } of counts) parts.push(`${n} ${p === 'system' ? 'system trouble' : p} listed`);
  return parts.join(', ');
}

/** Pure: the daily proof-of-life report. Alarm, trouble and system trouble are separate sections. */
export function composeDailyReport(data: DailyReportData, ctx: MailEnvelope): OutboxMessage {
  const periodMs = data.periodMs ?? REPORT_PERIOD_MS;
  const day = new Intl.DateTimeFormat('en-GB', { timeZone: data.timeZone, weekday: 'short', day: 'numeric', month: 'short' }).format(
    new Date(data.generatedAt),
  );
  const subject = `[REPORT] ${data.siteName}: daily report ${day} — ${summary(data)}`;
  const sections = buildSections(data, periodMs);
  const intro = [
    `Daily report for ${data.siteName}, made ${formatSiteAndUtc(data.generatedAt, data.timeZone)}.`,
    `Monitoring has run since ${formatSiteAndUtc(data.monitorStartedAt, data.timeZone)}.`,
  ];
  const closing = [
    `Next report: ${formatSiteAndUtc(data.nextReportAt, data.timeZone)}.`,
    REPORT_DEAD_MAN_LINE,
    'Test the whole chain (remote node to phone) after installation and each autumn.',
  ];

  const text: string[] = [subject, '', ...intro, ''];
  for (const section of sections) {
    text.push(section.heading, '='.repeat(section.heading.length), ...section.lines.map((l) => `  ${l}`), '');
  }
  text.push(...closing, '', mailFooterText(data.siteName, data.publicUrl));

  const html: string[] = [`<h1 style="font-size:20px">${escapeHtml(subject)}</h1>`, ...intro.map((l) => `<p>${escapeHtml(l)}</p>`)];
  for (const section of sections) {
    html.push(
      `<h2 style="font-size:18px;margin:20px 0 8px">${escapeHtml(section.heading)}</h2><ul>${section.lines.map((l) => `<li>${escapeHtml(l)}</li>`).join('')}</ul>`,
    );
  }
  html.push(...closing.map((l, i) => (i === 1 ? `<p><strong>${escapeHtml(l)}</strong></p>` : `<p>${escapeHtml(l)}</p>`)));
  html.push(mailFooterHtml(data.siteName, data.publicUrl));

  return {
    messageId: ctx.newMessageId(),
    kind: 'daily-report',
    priority: null,
    from: ctx.from,
    to: [...ctx.to],
    subject,
    text: text.join('\n'),
    html: mailPageHtml(subject, html.join('\n')),
    headers: { 'Auto-Submitted': 'auto-generated' },
    alarmIds: [],
  };
}

