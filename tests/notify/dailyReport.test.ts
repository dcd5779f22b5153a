import { describe, expect, it } from 'vitest';
import { composeDailyReport, REPORT_DEAD_MAN_LINE, type DailyReportData } from '../../src/notify/composeDailyReport.js';
import { composeLifecycleMail } from '../../src/notify/composeLifecycleMail.js';
import { counter } from './helpers/fixtures.js';

const now = Date.parse('2026-12-01T07:00:00.000Z');
const HOUR = 3_600_000;
const envelope = () => ({ from: 'pairwatch <monitor@ridgeway.example>', to: ['office@ridgeway.example'], newMessageId: counter('<report-') });

function data(overrides: Partial<DailyReportData> = {}): DailyReportData {
  return {
    siteName: 'Ridgeway Farm',
    timeZone: 'Europe/London',
    publicUrl: 'http://127.0.0.1:8080',
    generatedAt: now,
    nextReportAt: now + 24 * HOUR,
    monitorStartedAt: now - 10 * 24 * HOUR,
    loops: [
      { id: 'well', name: 'Well pit', location: 'Pump house', state: 'tripped', sinceMs: now - 2 * HOUR, lastPulseAtMs: now - 2 * HOUR, inService: true, serviceNote: null },
      { id: 'lambing', name: 'Lambing shed', location: null, state: 'healthy', sinceMs: now - 30 * HOUR, lastPulseAtMs: now - 400, inService: true, serviceNote: null },
      { id: 'tack', name: 'Tack room <east>', location: null, state: 'healthy', sinceMs: now - 30 * HOUR, lastPulseAtMs: now, inService: false, serviceNote: 'new cable going in' },
    ],
    alarms: [
      { id: 1, source: 'well', loopId: 'well', condition: 'tripped', priority: 'alarm', state: 'acknowledged', raisedAt: now - 2 * HOUR, clearedAt: null, ackedAt: now - HOUR, ackedBy: 'ann', note: 'heater off' },
      { id: 2, source: 'lambing', loopId: 'lambing', condition: 'open', priority: 'trouble', state: 'normal', raisedAt: now - 20 * HOUR, clearedAt: now - 19 * HOUR, ackedAt: now - 19.5 * HOUR, ackedBy: 'bob', note: null },
    ],
    decoders: [{ id: 'main', name: 'Office decoder', status: 'connected', connectedMsInPeriod: 23.5 * HOUR, restarts: 1, frames: 345_600, badFrames: 3, lostFrames: 12 }],
    mail: { pending: 0, sentInPeriod: 5, failedAttemptsInPeriod: 1 },
    ...overrides,
  };
}

describe('composeDailyReport', () => {
  it('lists every loop, alarm, trouble and system trouble in separate sections, the decoders and the next report', () => {
    const mail = composeDailyReport(data(), envelope());
    expect(mail.kind).toBe('daily-report');
    expect(mail.subject).toBe('[REPORT] Ridgeway Farm: daily report Tue 1 Dec — 1 of 3 loops healthy, 1 alarm listed');
    const text = mail.text;
    for (const name of ['Well pit', 'Lambing shed', 'Tack room <east>']) expect(text).toContain(name);
    expect(text).toContain('Well pit (Pump house): TRIPPED since Tue 1 Dec 2026, 05:00:00 GMT');
    expect(text).toContain('Tack room <east>: OUT OF SERVICE — new cable going in');
    const headings = ['LOOPS NOW (3)', 'ALARM, LAST 24 H (1)', 'TROUBLE, LAST 24 H (1)', 'SYSTEM TROUBLE, LAST 24 H (0)', 'DECODERS (1)', 'MAIL'];
    const positions = headings.map((h) => text.indexOf(`${h}\n`));
    expect(positions.every((p) => p >= 0)).toBe(true);
    expect([...positions].sort((a, b) => a - b)).toEqual(positions);
    expect(text).toContain('acknowledged by ann');
    expect(text).toContain('("heater off")');
    // 12 lost of 345 612 frames sent ≈ 0.003 %; 23.5 h of 24 h ≈ 97.9 %.
    expect(text).toContain('Office decoder: connected; connected 23 h 30 min of 24 h (97.9 %), 1 restart, 345600 frames, 12 lost (0.003 %), 3 garbled');
    expect(text).toContain('Next report: Wed 2 Dec 2026, 07:00:00 GMT (2026-12-02 07:00:00 UTC).');
    expect(text).toContain(REPORT_DEAD_MAN_LINE);
    expect(REPORT_DEAD_MAN_LINE).toBe('If this report ever fails to arrive, the monitor itself is down.');
    expect(text).toContain('not a life-safety system');
    expect(mail.headers['Auto-Submitted']).toBe('auto-generated');
  });

  it('says "all loops healthy" on a quiet day and "None." for empty sections', () => {
    const quiet = data({
      loops: [{ id: 'lambing', name: 'Lambing shed', location: null, state: 'healthy', sinceMs: now - 30 * HOUR, lastPulseAtMs: now, inService: true, serviceNote: null }],
      alarms: [],
    });
    const mail = composeDailyReport(quiet, envelope());
    expect(mail.subject).toBe('[REPORT] Ridgeway Farm: daily report Tue 1 Dec — all loops healthy (1)');
    expect(mail.text.match(/^ {2}None\.$/gm)).toHaveLength(3);
  });

  it('escapes loop names and notes in the HTML part', () => {
    const mail = composeDailyReport(data(), envelope());
    expect(mail.html).toContain('Tack room &lt;east&gt;');
    expect(mail.html).not.toContain('Tack room <east>');
  });
});

describe('composeLifecycleMail', () => {
  const lifecycle = { siteName: 'Ridgeway Farm', timeZone: 'Europe/London', publicUrl: 'http://127.0.0.1:8080', at: now, loopCount: 3, decoderCount: 1, nextReportAt: now + HOUR };

  it('announces the start with what is watched and when the next report comes', () => {
    const mail = composeLifecycleMail('started', lifecycle, envelope());
    expect(mail.subject).toBe('[SYSTEM] Ridgeway Farm: monitoring started');
    expect(mail.text).toContain('It watches 3 loops on 1 decoder.');
    expect(mail.text).toContain('The next daily report is due Tue 1 Dec 2026, 08:00:00 GMT');
    expect(mail.priority).toBe('system');
  });

  it('announces a deliberate stop and says the loops are not watched', () => {
    const mail = composeLifecycleMail('stopped', { ...lifecycle, reason: 'stopped by the service manager (SIGTERM)' }, envelope());
    expect(mail.subject).toBe('[SYSTEM] Ridgeway Farm: monitoring stopped on purpose');
    expect(mail.text).toContain('(stopped by the service manager (SIGTERM))');
    expect(mail.text).toContain('NOT watched');
  });
});
