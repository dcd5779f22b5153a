import { describe, expect, it } from 'vitest';
import { composeDailyReport, REPORT_DEAD_MAN_LINE, type DailyReportData, type ReportAlarm, type ReportLoop } from '../../src/notify/composeDailyReport.js';
import { composeLifecycleMail } from '../../src/notify/composeLifecycleMail.js';
import { counter } from './helpers/fixtures.js';

/**
 * The daily report and the start/stop mails line by line, as the README's "Proof of life" describes
 * them: every loop's state, the alarms, trouble and system trouble of the period (each its own
 * section), each decoder's uptime and lost frames, the mail queue, the next report. Loop states read in
 * the README's words ("The loop as the server sees it"). Every expected line is written out by hand;
 * the site and its loops are invented.
 */

const now = Date.parse('2026-12-01T07:00:00.000Z');
const HOUR = 3_600_000;
const envelope = () => ({ from: 'pairwatch <monitor@ridgeway.example>', to: ['office@ridgeway.example'], newMessageId: counter('<report-') });
const loop = (id: string, name: string, extra: Partial<ReportLoop> = {}): ReportLoop => ({
  id, name, location: null, state: 'healthy', sinceMs: now - 30 * HOUR, lastPulseAtMs: null, inService: true, serviceNote: null, ...extra,
});
const raised = (id: number, extra: Partial<ReportAlarm>): ReportAlarm => ({
  id, source: 'well', loopId: 'well', condition: 'tripped', priority: 'alarm', state: 'unacknowledged', raisedAt: now - 3 * HOUR, clearedAt: null, ackedAt: null, ackedBy: null, note: null, ...extra,
});
function data(overrides: Partial<DailyReportData> = {}): DailyReportData {
  return {
    siteName: 'Ridgeway Farm', timeZone: 'Europe/London', publicUrl: 'http://127.0.0.1:8080', generatedAt: now, nextReportAt: now + 24 * HOUR,
    monitorStartedAt: now - 10 * 24 * HOUR, loops: [loop('well', 'Well pit')], alarms: [], decoders: [],
    mail: { pending: 2, sentInPeriod: 0, failedAttemptsInPeriod: 0 }, ...overrides,
  };
}
const lines = (mail: { text: string }) => mail.text.split('\n').filter((l) => l.startsWith('  ')).map((l) => l.slice(2));

describe('daily report: loops', () => {
  it('says each state in the README\'s words, with since when and when the last pulse came', () => {
    const mail = composeDailyReport(data({
      loops: [
        loop('well', 'Well pit', { lastPulseAtMs: now - 90_000 }),
        loop('lambing', 'Lambing shed', { state: 'open', location: 'East yard', sinceMs: now - HOUR }),
        loop('tack', 'Tack room', { state: 'shorted' }),
        loop('bay1', 'Hay bay 1', { state: 'offline' }),
        loop('bay2', 'Hay bay 2', { state: 'unknown' }),
        loop('bay3', 'Hay bay 3', { inService: false }),
      ],
    }), envelope());
    expect(lines(mail).slice(0, 6)).toEqual([
      'Well pit: healthy since Mon 30 Nov 2026, 01:00:00 GMT, last pulse 1 min ago',
      'Lambing shed (East yard): OPEN CIRCUIT since Tue 1 Dec 2026, 06:00:00 GMT',
      'Tack room: SHORT CIRCUIT since Mon 30 Nov 2026, 01:00:00 GMT',
      'Hay bay 1: OFFLINE (decoder silent) since Mon 30 Nov 2026, 01:00:00 GMT',
      'Hay bay 2: not yet known since Mon 30 Nov 2026, 01:00:00 GMT',
      'Hay bay 3: OUT OF SERVICE',
    ]);
    expect(mail.subject).toBe('[REPORT] Ridgeway Farm: daily report Tue 1 Dec — 1 of 6 loops healthy');
  });
});

describe('daily report: alarms, trouble and system trouble', () => {
  it('each line says what, when raised, whether still present, who acknowledged, and how it stands now', () => {
    const mail = composeDailyReport(data({
      alarms: [
        raised(1, {}),
        raised(2, { source: 'main', loopId: null, condition: 'offline', priority: 'trouble', state: 'returned-unacknowledged', clearedAt: now - 2 * HOUR }),
        raised(3, { source: 'system', loopId: null, condition: 'mail-failing', priority: 'system', raisedAt: now - HOUR, state: 'acknowledged', ackedAt: now - HOUR / 2 }),
        raised(4, { source: 'yard', loopId: null, condition: 'decoder-fault', priority: 'trouble', raisedAt: now - 4 * HOUR, state: 'out-of-service' }),
      ],
      decoders: [{ id: 'main', name: 'Office decoder', status: 'connected', connectedMsInPeriod: 24 * HOUR, restarts: 0, frames: 0, badFrames: 0, lostFrames: 0 }],
    }), envelope());
    const text = mail.text;
    expect(text).toContain('\n  Well pit — tripped: raised Tue 1 Dec 2026, 04:00:00 GMT; still present; now active, not acknowledged\n');
    // Trouble oldest first: the yard decoder's fault (04:00 less an hour) before the office decoder going offline.
    expect(text).toContain('TROUBLE, LAST 24 H (2)\n======================\n'
      + '  Decoder yard — decoder fault: raised Tue 1 Dec 2026, 03:00:00 GMT; still present; now loop out of service\n'
      + '  Decoder Office decoder — decoder offline: raised Tue 1 Dec 2026, 04:00:00 GMT; back to normal Tue 1 Dec 2026, 05:00:00 GMT; now back to normal — still needs acknowledging\n');
    expect(text).toContain('\n  Monitor — mail failing: raised Tue 1 Dec 2026, 06:00:00 GMT; still present; acknowledged by someone Tue 1 Dec 2026, 06:30:00 GMT; now active, acknowledged\n');
    expect(mail.subject).toBe('[REPORT] Ridgeway Farm: daily report Tue 1 Dec — 1 of 1 loops healthy, 1 alarm listed, 2 trouble listed, 1 system trouble listed');
  });

  it('a closed alarm is reported in its section but not counted as listed', () => {
    const closed = raised(1, { state: 'normal', clearedAt: now - 2 * HOUR, ackedAt: now - 2.5 * HOUR, ackedBy: 'ann' });
    const mail = composeDailyReport(data({ alarms: [closed] }), envelope());
    expect(mail.subject).toBe('[REPORT] Ridgeway Farm: daily report Tue 1 Dec — all loops healthy (1)');
    expect(mail.text).toContain('ALARM, LAST 24 H (1)');
    expect(mail.text).toContain('; now closed\n');
  });
});

describe('daily report: decoders, mail, period', () => {
  it('a decoder that sent nothing shows 0 % lost, a period that is not whole hours reads as elapsed time, plural counts', () => {
    const mail = composeDailyReport(data({
      periodMs: 90 * 60_000,
      decoders: [{ id: 'yard', name: null, status: 'offline', connectedMsInPeriod: 0, restarts: 2, frames: 0, badFrames: 0, lostFrames: 0 }],
      mail: { pending: 2, sentInPeriod: 7, failedAttemptsInPeriod: 3 },
    }), envelope());
    expect(mail.text).toContain('\n  yard: offline; connected 0 s of 1 h 30 min (0.0 %), 2 restarts, 0 frames, 0 lost (0.000 %), 0 garbled\n');
    expect(mail.text).toContain('ALARM, LAST 1 H 30 MIN (0)');
    expect(mail.text).toContain('\n  7 sent, 3 failed attempts in the period; 2 waiting in the outbox.\n');
  });

  it('a connected share never reads above 100 % (a session counted across the period edge)', () => {
    const mail = composeDailyReport(data({
      decoders: [{ id: 'main', name: 'Office decoder', status: 'connected', connectedMsInPeriod: 25 * HOUR, restarts: 0, frames: 10, badFrames: 0, lostFrames: 0 }],
    }), envelope());
    expect(mail.text).toContain('Office decoder: connected; connected 1 d 1 h of 24 h (100.0 %), 0 restarts, 10 frames, 0 lost (0.000 %), 0 garbled');
  });

  it('no decoders: "None configured."; the closing says when the next report comes and why it matters, in bold in HTML', () => {
    const mail = composeDailyReport(data(), envelope());
    expect(mail.text).toContain('DECODERS (0)\n============\n  None configured.\n');
    expect(mail.text).toContain('\n  0 sent, 0 failed attempts in the period; 2 waiting in the outbox.\n');
    expect(mail.text).toContain('Daily report for Ridgeway Farm, made Tue 1 Dec 2026, 07:00:00 GMT (2026-12-01 07:00:00 UTC).\nMonitoring has run since Sat 21 Nov 2026, 07:00:00 GMT (2026-11-21 07:00:00 UTC).');
    expect(mail.text).toContain('Test the whole chain (remote node to phone) after installation and each autumn.');
    expect(mail.html).toContain(`<p><strong>${REPORT_DEAD_MAN_LINE}</strong></p>`);
    expect(mail.html).toContain('<li>None configured.</li>');
    expect(mail.to).toEqual(['office@ridgeway.example']);
    expect(mail.priority).toBeNull();
  });
});

describe('start and stop mails', () => {
  const lifecycle = { siteName: 'Ridgeway Farm', timeZone: 'Europe/London', publicUrl: 'http://127.0.0.1:8080', at: now, loopCount: 1, decoderCount: 2, nextReportAt: null, version: '1.4.0' };

  it('a start with no daily report configured says so, with the version and counts in words', () => {
    const mail = composeLifecycleMail('started', lifecycle, envelope());
    expect(mail.text).toContain('\npairwatch 1.4.0 started at Tue 1 Dec 2026, 07:00:00 GMT (2026-12-01 07:00:00 UTC).\nIt watches 1 loop on 2 decoders.\nNo daily report is configured (report.notify is empty).\n');
    expect(mail.headers['Auto-Submitted']).toBe('auto-generated');
    expect(mail.html).toContain('<p>It watches 1 loop on 2 decoders.</p>');
  });

  it('a stop with one loop and no reason given', () => {
    const mail = composeLifecycleMail('stopped', { ...lifecycle, version: null }, envelope());
    expect(mail.text).toContain('\npairwatch was stopped on purpose at Tue 1 Dec 2026, 07:00:00 GMT (2026-12-01 07:00:00 UTC).\nIts 1 loop is NOT watched until it is started again: no alarms, no daily report.\n');
  });
});

describe('daily report: the mail itself', () => {
  it('a report mail: its own Message-ID, about no alarm, sent to the report list (README: report.notify)', () => {
    const mail = composeDailyReport(data(), { from: 'pairwatch <monitor@ridgeway.example>', to: ['office@ridgeway.example', 'oncall@ridgeway.example'], newMessageId: () => '<r1@pairwatch.ridgeway.example>' });
    expect(mail).toMatchObject({ messageId: '<r1@pairwatch.ridgeway.example>', kind: 'daily-report', from: 'pairwatch <monitor@ridgeway.example>', alarmIds: [] });
    expect(mail.to).toEqual(['office@ridgeway.example', 'oncall@ridgeway.example']);
    expect(mail.headers).toEqual({ 'Auto-Submitted': 'auto-generated' });
  });

  it('the HTML part: the subject as heading, the opening lines as paragraphs, each section a heading and a list', () => {
    const mail = composeDailyReport(data({ loops: [loop('tack', 'Tack room <east>', { location: 'Yard & lane' })] }), envelope());
    expect(mail.html).toMatch(/<h1[^>]*>\[REPORT\] Ridgeway Farm: daily report Tue 1 Dec — all loops healthy \(1\)<\/h1>/);
    expect(mail.html).toContain('<p>Daily report for Ridgeway Farm, made Tue 1 Dec 2026, 07:00:00 GMT (2026-12-01 07:00:00 UTC).</p>');
    expect(mail.html).toMatch(/<h2[^>]*>LOOPS NOW \(1\)<\/h2><ul><li>Tack room &lt;east&gt; \(Yard &amp; lane\): healthy since Mon 30 Nov 2026, 01:00:00 GMT<\/li><\/ul>/);
    expect(mail.html).toMatch(/<h2[^>]*>MAIL<\/h2><ul><li>0 sent, 0 failed attempts in the period; 2 waiting in the outbox\.<\/li><\/ul>/);
    expect(mail.html).toContain('<p>Next report: Wed 2 Dec 2026, 07:00:00 GMT (2026-12-02 07:00:00 UTC).</p>');
    expect(mail.html).toContain('<p>Test the whole chain (remote node to phone) after installation and each autumn.</p>');
    expect(mail.html).toContain('replies are not read');
    expect(mail.html).toMatch(/<\/h1>\n<p>Daily report for /);
    const two = composeDailyReport(data({ loops: [loop('well', 'Well pit'), loop('lambing', 'Lambing shed')] }), envelope());
    expect(two.html).toMatch(/<li>Well pit: healthy since [^<]*<\/li><li>Lambing shed: healthy since [^<]*<\/li><\/ul>/);
    expect(mail.html).toMatch(/<title>\[REPORT\] Ridgeway Farm: daily report Tue 1 Dec — all loops healthy \(1\)<\/title>/);
  });

  it('the text part: subject, opening, each section underlined, closing, footer', () => {
    const text = composeDailyReport(data(), envelope()).text;
    expect(text.startsWith('[REPORT] Ridgeway Farm: daily report Tue 1 Dec — all loops healthy (1)\n\nDaily report for Ridgeway Farm')).toBe(true);
    expect(text).toContain('\nLOOPS NOW (1)\n=============\n  Well pit: healthy since Mon 30 Nov 2026, 01:00:00 GMT\n\n');
    expect(text).toContain('\nMAIL\n====\n');
    expect(text).toContain(`Next report: Wed 2 Dec 2026, 07:00:00 GMT (2026-12-02 07:00:00 UTC).\n${REPORT_DEAD_MAN_LINE}\n`);
    expect(text).toMatch(/\n--\nSent automatically by pairwatch at Ridgeway Farm; replies are not read\.\nThe board: http:\/\/127\.0\.0\.1:8080\/\n/);
    // Blank lines: after the opening, and between the closing and the footer.
    expect(text).toContain('Monitoring has run since Sat 21 Nov 2026, 07:00:00 GMT (2026-11-21 07:00:00 UTC).\n\nLOOPS NOW (1)\n');
    expect(text).toContain('Test the whole chain (remote node to phone) after installation and each autumn.\n\n--\n');
  });

  it('a loop out of service keeps its location and shows the note only when there is one', () => {
    const mail = composeDailyReport(data({
      loops: [loop('bay3', 'Hay bay 3', { location: 'Long barn', inService: false, serviceNote: 'roof repair' }), loop('bay4', 'Hay bay 4', { location: 'Long barn', inService: false })],
    }), envelope());
    expect(lines(mail).slice(0, 2)).toEqual(['Hay bay 3 (Long barn): OUT OF SERVICE — roof repair', 'Hay bay 4 (Long barn): OUT OF SERVICE']);
  });

  it('a decoder that lost everything it sent reads 100 % lost; a zero-length period divides by nothing', () => {
    const mail = composeDailyReport(data({
      periodMs: 0,
      decoders: [{ id: 'yard', name: 'Yard decoder', status: 'disconnected', connectedMsInPeriod: 0, restarts: 0, frames: 0, badFrames: 0, lostFrames: 5 }],
    }), envelope());
    expect(mail.text).toContain('\n  Yard decoder: disconnected; connected 0 s of 0 s (0.0 %), 0 restarts, 0 frames, 5 lost (100.000 %), 0 garbled\n');
    expect(mail.text).toContain('ALARM, LAST 0 S (0)');
  });

  it('an acknowledgement without a note adds nothing after the time', () => {
    const mail = composeDailyReport(data({ alarms: [raised(1, { state: 'acknowledged', ackedAt: now - HOUR, ackedBy: 'ann' })] }), envelope());
    expect(lines(mail)).toContain('Well pit — tripped: raised Tue 1 Dec 2026, 04:00:00 GMT; still present; acknowledged by ann Tue 1 Dec 2026, 06:00:00 GMT; now active, acknowledged');
  });

  it('alarms of one priority oldest first, whatever order they came in', () => {
    const mail = composeDailyReport(data({
      loops: [loop('well', 'Well pit'), loop('lambing', 'Lambing shed')],
      alarms: [raised(2, { loopId: 'lambing', raisedAt: now - HOUR }), raised(1, { raisedAt: now - 5 * HOUR }), raised(3, { loopId: 'well', raisedAt: now - 2 * HOUR })],
    }), envelope());
    expect(lines(mail).filter((l) => l.includes(' — tripped: raised ')).map((l) => l.slice(0, 40))).toEqual([
      'Well pit — tripped: raised Tue 1 Dec 202',
      'Well pit — tripped: raised Tue 1 Dec 202',
      'Lambing shed — tripped: raised Tue 1 Dec',
    ]);
    expect(lines(mail).filter((l) => l.includes(' — tripped: raised ')).map((l) => /raised \w+ \d+ \w+ \d+, (\d\d:\d\d)/.exec(l)![1])).toEqual(['02:00', '05:00', '06:00']);
  });
});

describe('start and stop mails: the rest', () => {
  const lifecycle = { siteName: 'Ridgeway Farm', timeZone: 'Europe/London', publicUrl: 'http://127.0.0.1:8080', at: now, loopCount: 3, decoderCount: 1, nextReportAt: null };
  const env = { from: 'pairwatch <monitor@ridgeway.example>', to: ['office@ridgeway.example'], newMessageId: () => '<l1@pairwatch.ridgeway.example>' };

  it('a stop with several loops says they are not watched, in the plural', () => {
    const mail = composeLifecycleMail('stopped', lifecycle, env);
    expect(mail.text).toContain('\nIts 3 loops are NOT watched until it is started again: no alarms, no daily report.\n');
    expect(mail.text).toContain('\npairwatch was stopped on purpose at Tue 1 Dec 2026, 07:00:00 GMT (2026-12-01 07:00:00 UTC).\n');
  });

  it('a start without a version names no version', () => {
    expect(composeLifecycleMail('started', lifecycle, env).text).toContain('\npairwatch started at Tue 1 Dec 2026, 07:00:00 GMT (2026-12-01 07:00:00 UTC).\n');
  });

  it('a lifecycle mail: its own Message-ID, about no alarm, priority system, with the subject as HTML heading and title', () => {
    const mail = composeLifecycleMail('stopped', { ...lifecycle, reason: 'stopped by the service manager (SIGTERM)' }, env);
    expect(mail).toMatchObject({ messageId: '<l1@pairwatch.ridgeway.example>', kind: 'lifecycle', priority: 'system', alarmIds: [], to: ['office@ridgeway.example'], from: 'pairwatch <monitor@ridgeway.example>' });
    expect(mail.headers).toEqual({ 'Auto-Submitted': 'auto-generated' });
    expect(mail.text.startsWith('[SYSTEM] Ridgeway Farm: monitoring stopped on purpose\n\n')).toBe(true);
    expect(mail.html).toMatch(/<h1[^>]*>\[SYSTEM\] Ridgeway Farm: monitoring stopped on purpose<\/h1>/);
    expect(mail.html).toContain('<title>[SYSTEM] Ridgeway Farm: monitoring stopped on purpose</title>');
    expect(mail.html).toMatch(/<\/h1>\n<p>pairwatch was stopped on purpose at /);
    expect(mail.text).toContain('no alarms, no daily report.\n\n--\n');
    expect(mail.html).toContain('<p>Its 3 loops are NOT watched until it is started again: no alarms, no daily report.</p>');
    expect(mail.html).toContain('Sent automatically by pairwatch at Ridgeway Farm; replies are not read.');
    expect(mail.text).toContain('\n--\nSent automatically by pairwatch at Ridgeway Farm; replies are not read.\n');
  });
});

describe('daily report: how an alarm stands', () => {
  it('a latched alarm whose condition has gone reads "back to normal — still needs acknowledging", not active', () => {
    const mail = composeDailyReport(data({ alarms: [raised(1, { clearedAt: now - HOUR })] }), envelope());
    expect(lines(mail)).toContain('Well pit — tripped: raised Tue 1 Dec 2026, 04:00:00 GMT; back to normal Tue 1 Dec 2026, 06:00:00 GMT; now back to normal — still needs acknowledging');
  });

  it('an alarm on a loop no longer configured is named by the loop id', () => {
    const mail = composeDailyReport(data({ alarms: [raised(1, { source: 'silo', loopId: 'silo' })] }), envelope());
    expect(lines(mail)).toContain('Loop silo — tripped: raised Tue 1 Dec 2026, 04:00:00 GMT; still present; now active, not acknowledged');
  });
});
