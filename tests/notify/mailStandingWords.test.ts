import { describe, expect, it } from 'vitest';
import { NOTICE_KINDS } from '../../src/alarms/alarmTypes.js';
import { ALARM_STATES } from '../../src/model/alarmState.js';
import { composeNoticeMail, type NoticeComposeContext } from '../../src/notify/composeNoticeMail.js';
import type { NoticeAlarm, PendingNotice } from '../../src/alarms/noticeTypes.js';
import { sampleNoticeAlarm } from '../helpers/sampleAlarm.js';
import { settings } from './helpers/fixtures.js';

/**
 * Issue 9, items 17 and 18, as rules over every case rather than one example:
 * - a latched alarm that has returned to normal but is not acknowledged reads "back to normal — still
 *   needs acknowledging" in the subject and in the body's status alike, whatever notice the mail is for;
 * - a subject never says "back to normal" while the body's status says "active" (the reported bug);
 * - the offline mail's "what to check" depends on how the decoder is linked (USB serial or tcp://).
 */
const t0 = Date.parse('2026-12-01T03:00:00.000Z');
const BACK = 'back to normal — still needs acknowledging';
const shared = settings();

function mailFor(alarm: NoticeAlarm, kind: PendingNotice['kind'], overrides: Partial<NoticeComposeContext> = {}) {
  const notice: PendingNotice = { id: 1, contactId: 'office', alarmId: alarm.id, kind, createdAt: t0, dueAt: t0 + 10_000, actor: null, note: null };
  return composeNoticeMail(
    { contactId: 'office', dueAt: t0 + 10_000, notices: [notice] },
    { ...shared, now: t0 + 20 * 60_000, alarms: new Map([[alarm.id, alarm]]), recipients: new Map(), ...overrides },
  );
}

const statusOf = (text: string) => /^ {2}Status: +(.*)$/m.exec(text)?.[1] ?? '';

describe('mail wording for an alarm back to normal but not acknowledged (issue 9, item 18)', () => {
  const latchedCleared = sampleNoticeAlarm(t0, { loopId: 'well', source: 'well', state: 'unacknowledged', active: false, clearedAt: t0 + 5 * 60_000 });
  const returned = { ...latchedCleared, state: 'returned-unacknowledged' as const };

  for (const alarm of [latchedCleared, returned]) {
    for (const kind of NOTICE_KINDS.filter((k) => k !== 'acknowledged' && k !== 'shelved')) {
      it(`${alarm.state}, active false, "${kind}" notice: subject and status both say "${BACK}"`, () => {
        const mail = mailFor(alarm, kind);
        expect(statusOf(mail.text)).toBe(BACK);
        expect(mail.subject).toContain(BACK);
        expect(mail.html).toContain(BACK);
        expect(mail.text).not.toMatch(/\bactive, not acknowledged\b/);
        // It still wants a person: the acknowledge link is there.
        expect(mail.text).toMatch(/Acknowledge: +https:\/\/monitor\.ridgeway\.example\/ack\//);
      });
    }
  }

  it('rule over every state, active flag and notice kind: subject and status never disagree', () => {
    for (const state of ALARM_STATES) {
      for (const active of [true, false]) {
        // Pairs the lifecycle never makes: an acknowledged alarm closes when it clears; a returned one that comes back is unacknowledged.
        if ((state === 'acknowledged' && !active) || (state === 'returned-unacknowledged' && active)) continue;
        for (const kind of NOTICE_KINDS) {
          const alarm = sampleNoticeAlarm(t0, { loopId: 'well', source: 'well', state, active, clearedAt: active ? null : t0 + 60_000 });
          const mail = mailFor(alarm, kind);
          const status = statusOf(mail.text);
          const where = `${state}/${active}/${kind}: "${mail.subject}" vs "${status}"`;
          if (/back to normal/.test(mail.subject)) expect(status, where).not.toMatch(/^active/);
          if (status === BACK && kind !== 'acknowledged' && kind !== 'shelved') expect(mail.subject, where).toContain(BACK);
          if (/^active/.test(status)) expect(mail.subject, where).not.toMatch(/back to normal/);
        }
      }
    }
  });

  it('a closed alarm reads closed, not active and not "needs acknowledging"', () => {
    const closed = sampleNoticeAlarm(t0, { loopId: 'well', source: 'well', state: 'normal', active: false, clearedAt: t0 + 60_000, ackedAt: t0 + 30_000, ackedBy: 'ann' });
    const mail = mailFor(closed, 'cleared');
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: Well pit — back to normal');
    expect(statusOf(mail.text)).toMatch(/^closed/);
    expect(mail.text).not.toContain('needs acknowledging');
    expect(mail.text).not.toContain('/ack/');
  });
});

describe('offline mail: what to check depends on the decoder link (issue 9, item 17)', () => {
  const offline = (source: string) => sampleNoticeAlarm(t0, { source, loopId: null, condition: 'offline', priority: 'trouble' });
  const checkOf = (text: string) => /^ {2}What to check: +(.*)$/m.exec(text)?.[1] ?? '';
  const decoders = [
    { id: 'usb', name: 'Office decoder', port: '/dev/ttyACM0' },
    { id: 'net', name: 'Barn decoder', port: 'tcp://192.168.1.40:4001' },
  ];

  it('a USB serial decoder: check the USB cable', () => {
    const check = checkOf(mailFor(offline('usb'), 'raised', { decoders }).text);
    expect(check).toMatch(/USB cable/);
    expect(check).not.toMatch(/network/);
  });

  it('a tcp:// decoder: check the network path, never a USB cable', () => {
    const mail = mailFor(offline('net'), 'raised', { decoders });
    const check = checkOf(mail.text);
    expect(check).toMatch(/network/);
    expect(mail.text).not.toMatch(/USB/);
    // Item 17: named by its configured name, not its id.
    expect(mail.subject).toContain('Barn decoder');
  });

  it('noisy link advice follows the link too', () => {
    const noisy = (source: string) => ({ ...offline(source), condition: 'link-noisy' as const });
    expect(checkOf(mailFor(noisy('usb'), 'raised', { decoders }).text)).toMatch(/USB cable/);
    expect(mailFor(noisy('net'), 'raised', { decoders }).text).not.toMatch(/USB/);
  });
});
