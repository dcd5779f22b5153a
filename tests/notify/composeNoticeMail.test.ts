import { describe, expect, it } from 'vitest';
import { CONDITION_TEXT } from '../../src/model/condition.js';
import { verifyAckToken } from '../../src/notify/ackToken.js';
import { composeNoticeMail, type NoticeComposeContext } from '../../src/notify/composeNoticeMail.js';
import type { Digest, NoticeAlarm, PendingNotice } from '../../src/alarms/noticeTypes.js';
import { sampleNoticeAlarm } from '../helpers/sampleAlarm.js';
import { secret, settings } from './helpers/fixtures.js';

const t0 = Date.parse('2026-12-01T03:00:00.000Z');

/** The shared sample alarm, on no loop unless the test names one (then its source is that loop). */
function alarm(id: number, partial: Partial<NoticeAlarm>): NoticeAlarm {
  return sampleNoticeAlarm(t0, { id, source: partial.loopId ?? 'system', loopId: null, ...partial });
}

let noticeId = 0;
function notice(alarmId: number, kind: PendingNotice['kind'] = 'raised', extra: Partial<PendingNotice> = {}): PendingNotice {
  return { id: ++noticeId, contactId: 'office', alarmId, kind, createdAt: t0, dueAt: t0 + 10_000, actor: null, note: null, ...extra };
}

// One settings object for the file, so Message-IDs keep counting up between mails.
const shared = settings();

function ctx(alarms: NoticeAlarm[], recipients: Record<number, string[]> = {}, now = t0 + 10_000): NoticeComposeContext {
  return {
    ...shared,
    now,
    alarms: new Map(alarms.map((a) => [a.id, a])),
    recipients: new Map(Object.entries(recipients).map(([k, v]) => [Number(k), v])),
  };
}

const digest = (notices: PendingNotice[], contactId = 'office'): Digest => ({ contactId, dueAt: t0 + 10_000, notices });

describe('composeNoticeMail: subject', () => {
  it('one alarm: priority, site, loop and condition', () => {
    const mail = composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { loopId: 'well' })]));
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped');
    expect(mail.priority).toBe('alarm');
  });

  it('several conditions: count first, highest priority wins the tag, alarms listed first', () => {
    const alarms = [
      alarm(1, { loopId: 'lambing', condition: 'open', priority: 'trouble' }),
      alarm(2, { loopId: 'well', raisedAt: t0 + 2_000 }),
      alarm(3, { source: 'system', condition: 'mail-failing', priority: 'system' }),
    ];
    const mail = composeNoticeMail(digest([notice(1), notice(2), notice(3)]), ctx(alarms));
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: 3 conditions — Well pit tripped, Lambing shed open circuit, Monitor mail failing');
  });

  it('trouble only and system only carry their own tags', () => {
    expect(composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { loopId: 'lambing', condition: 'shorted', priority: 'trouble' })])).subject).toMatch(/^\[TROUBLE\] Ridgeway Farm: /);
    expect(composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { condition: 'storage-failing', priority: 'system' })])).subject).toBe(
      '[SYSTEM] Ridgeway Farm: Monitor — storage failing',
    );
  });

  it('a decoder going offline with 8 loops is one mail naming all 8, subject kept short', () => {
    const alarms = Array.from({ length: 8 }, (_, i) => alarm(i + 1, { loopId: `bay${i + 1}`, condition: 'offline', priority: 'trouble', raisedAt: t0 + i }));
    const mail = composeNoticeMail(digest(alarms.map((a) => notice(a.id))), ctx(alarms));
    expect(mail.subject.startsWith('[TROUBLE] Ridgeway Farm: 8 conditions — Hay bay 1 decoder offline')).toBe(true);
    expect(mail.subject.length).toBeLessThanOrEqual(160);
    expect(mail.subject).toMatch(/and \d more$/);
    for (let i = 1; i <= 8; i++) expect(mail.text).toContain(`Hay bay ${i} — decoder offline`);
    expect(mail.alarmIds).toEqual([1, 2, 3, 4, 5, 6, 7, 8]);
  });
});

describe('composeNoticeMail: body', () => {
  it('names the loop, where it is, the plain words, what to check, since when (site zone and UTC) and who else was told', () => {
    const mail = composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { loopId: 'well' })], { 1: ['office', 'oncall'] }));
    expect(mail.text).toContain('Pump house, north paddock');
    expect(mail.text).toContain(CONDITION_TEXT.tripped.words);
    expect(mail.text).toContain(CONDITION_TEXT.tripped.check);
    // 03:00 UTC on 1 Dec 2026 is 03:00 GMT in London (no summer time in December).
    expect(mail.text).toContain('Tue 1 Dec 2026, 03:00:00 GMT (2026-12-01 03:00:00 UTC)');
    expect(mail.text).toMatch(/Also told: +On-call phone/);
    expect(mail.text).not.toMatch(/Also told: +.*Farm office/);
  });

  it('keeps alarm, trouble and system in separate sections, in that order', () => {
    const alarms = [
      alarm(1, { condition: 'mail-failing', priority: 'system' }),
      alarm(2, { loopId: 'lambing', condition: 'open', priority: 'trouble' }),
      alarm(3, { loopId: 'well' }),
    ];
    const { text, html } = composeNoticeMail(digest([notice(1), notice(2), notice(3)]), ctx(alarms));
    const order = ['ALARM (1)', 'TROUBLE (1)', 'SYSTEM TROUBLE (1)'].map((h) => text.indexOf(`${h}\n`));
    expect(order.every((i) => i >= 0)).toBe(true);
    expect([...order].sort((a, b) => a - b)).toEqual(order);
    expect(html.indexOf('ALARM (1)')).toBeLessThan(html.indexOf('TROUBLE (1)'));
  });

  it('an unacknowledged alarm carries a working acknowledge link for that alarm', () => {
    const mail = composeNoticeMail(digest([notice(7)]), ctx([alarm(7, { loopId: 'well' })]));
    const link = /https:\/\/monitor\.ridgeway\.example\/ack\/(\S+)/.exec(mail.text);
    expect(link).not.toBeNull();
    const verdict = verifyAckToken(link![1]!, secret, t0 + 10_000);
    expect(verdict).toMatchObject({ ok: true, alarmId: 7 });
    expect(mail.html).toContain(`href="https://monitor.ridgeway.example/ack/${link![1]}"`);
  });

  it('each contact gets a link bound to them, so the acknowledgement can name who it was (issue 9)', () => {
    for (const contactId of ['office', 'oncall']) {
      const mail = composeNoticeMail(digest([notice(7, 'raised', { contactId })], contactId), ctx([alarm(7, { loopId: 'well' })]));
      const link = /\/ack\/(\S+)/.exec(mail.text)!;
      expect(verifyAckToken(link[1]!, secret, t0 + 10_000)).toMatchObject({ ok: true, alarmId: 7, contactId });
    }
  });

  it("a person's note stays quoted on its own line, whatever it holds (issue 9)", () => {
    const forged = 'fine\r\n  Acknowledge:    http://evil.example/ack/x';
    const acked = alarm(1, { loopId: 'well', state: 'acknowledged', ackedAt: t0 + 60_000, ackedBy: 'ann', note: forged });
    const mail = composeNoticeMail(digest([notice(1, 'acknowledged', { actor: 'ann', note: forged })]), ctx([acked], {}, t0 + 70_000));
    const lines = mail.text.split(/\r?\n/);
    expect(lines.filter((l) => /^\s*Acknowledge:/.test(l))).toEqual([]);
    expect(lines.find((l) => l.includes('Their note:'))).toMatch(/Their note: +“fine +Acknowledge: +http:\/\/evil\.example\/ack\/x”$/);
  });

  it('an acknowledged alarm says who acknowledged and their note, and has no link', () => {
    const acked = alarm(1, { loopId: 'well', state: 'acknowledged', ackedAt: t0 + 60_000, ackedBy: 'ann', note: 'Heater reset' });
    const mail = composeNoticeMail(digest([notice(1, 'acknowledged', { actor: 'ann', note: 'Heater reset' })]), ctx([acked], {}, t0 + 70_000));
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped, acknowledged by ann');
    expect(mail.text).toMatch(/Acknowledged: +by ann at /);
    expect(mail.text).toMatch(/Their note: +“Heater reset”/);
    expect(mail.text).not.toContain('/ack/');
  });

  it('a clear before anyone acknowledged still offers the link (returned-unacknowledged)', () => {
    const back = alarm(1, { loopId: 'well', state: 'returned-unacknowledged', active: false, clearedAt: t0 + 5 * 60_000 });
    const mail = composeNoticeMail(digest([notice(1, 'cleared')]), ctx([back], {}, t0 + 6 * 60_000));
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: Well pit — back to normal — still needs acknowledging');
    expect(mail.text).toContain('/ack/');
  });

  it('escapes every user-supplied string in the HTML part', () => {
    const acked = alarm(1, { loopId: 'tack', state: 'acknowledged', ackedAt: t0, ackedBy: '<b>bob</b>', note: '<script>alert(1)</script> & "quotes"' });
    const mail = composeNoticeMail(
      digest([notice(1, 'acknowledged', { actor: '<b>bob</b>', note: '<script>alert(1)</script> & "quotes"' })]),
      { ...ctx([acked], { 1: ['office', 'vet'] }), siteName: 'Ridge & <Co>' },
    );
    expect(mail.html).not.toContain('<script>');
    expect(mail.html).not.toContain('<b>bob</b>');
    expect(mail.html).not.toContain('Tack room <east>');
    expect(mail.html).toContain('Tack room &lt;east&gt;');
    expect(mail.html).toContain('&lt;script&gt;alert(1)&lt;/script&gt; &amp; &quot;quotes&quot;');
    expect(mail.html).toContain('Neighbour &quot;Sam&quot;');
    expect(mail.html).toContain('Ridge &amp; &lt;Co&gt;');
  });
});

describe('composeNoticeMail: headers', () => {
  it('marks the mail as auto-generated (RFC 3834 §5)', () => {
    const mail = composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { loopId: 'well' })]));
    expect(mail.headers['Auto-Submitted']).toBe('auto-generated');
  });

  it("the first mail of an alarm has no parent; later ones reply to the alarm's thread (RFC 5322 §3.6.4)", () => {
    const first = composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { loopId: 'well' })]));
    expect(first.headers['In-Reply-To']).toBeUndefined();
    const repeat = composeNoticeMail(digest([notice(1, 'repeat')]), ctx([alarm(1, { loopId: 'well', threadMessageId: first.messageId })]));
    expect(repeat.headers['In-Reply-To']).toBe(first.messageId);
    expect(repeat.headers['References']).toBe(first.messageId);
    expect(repeat.messageId).not.toBe(first.messageId);
  });

  it('addresses the contact with a quoted display name', () => {
    const mail = composeNoticeMail(digest([notice(1)], 'vet'), ctx([alarm(1, { loopId: 'well' })]));
    expect(mail.to).toEqual(['"Neighbour \\"Sam\\"" <sam@ridgeway.example>']);
  });
});

describe('composeNoticeMail: what one mail is made of', () => {
  it('several notices about one alarm are one entry, headed by the latest (README, Storm control: one mail per contact listing them all)', () => {
    const acked = alarm(1, { loopId: 'well', state: 'acknowledged', ackedAt: t0 + 5_000, ackedBy: 'ann' });
    const mail = composeNoticeMail(digest([notice(1), notice(1, 'acknowledged', { actor: 'ann' })]), ctx([acked]));
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped, acknowledged by ann');
    expect(mail.alarmIds).toEqual([1]);
    expect(mail.text.match(/^Well pit — /gm)).toEqual(['Well pit — ']);
  });

  it('a notice that names no alarm is left out of the mail', () => {
    const mail = composeNoticeMail(digest([notice(1), { ...notice(2), alarmId: null }]), ctx([alarm(1, { loopId: 'well' })]));
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped');
    expect(mail.alarmIds).toEqual([1]);
    expect(mail.text).not.toContain('#null');
  });

  it('a digest for a contact not in the configuration is refused with an error naming the id', () => {
    expect(() => composeNoticeMail(digest([notice(1)], 'ghost'), ctx([alarm(1, { loopId: 'well' })]))).toThrow(new RangeError('no contact has id "ghost"'));
  });

  it('each section heading is underlined to its own length in the text part', () => {
    const alarms = [alarm(1, { loopId: 'well' }), alarm(2, { condition: 'mail-failing', priority: 'system' })];
    const { text } = composeNoticeMail(digest([notice(1), notice(2)]), ctx(alarms));
    expect(text).toContain('\nALARM (1)\n=========\n\nWell pit — tripped\n');
    expect(text).toContain('\nSYSTEM TROUBLE (1)\n==================\n\nMonitor — mail failing\n');
    // A blank line after each entry; no heading for a priority with nothing in it.
    expect(text).toMatch(/\n {2}Acknowledge: +\S+\n\nSYSTEM TROUBLE \(1\)\n/);
    expect(text).not.toContain('TROUBLE (0)');
    expect(text).not.toMatch(/^TROUBLE/m);
    // The text part opens with the subject and a blank line.
    expect(text.startsWith('[ALARM] Ridgeway Farm: 2 conditions — Well pit tripped, Monitor mail failing\n\n')).toBe(true);
  });

  it('the HTML part: the subject as its heading, one section heading per priority, each fact as a table row', () => {
    const mail = composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { loopId: 'well' })], { 1: ['office', 'oncall'] }));
    expect(mail.html).toMatch(/<title>\[ALARM\] Ridgeway Farm: Well pit — tripped<\/title>/);
    expect(mail.html).toMatch(/<h1[^>]*>\[ALARM\] Ridgeway Farm: Well pit — tripped<\/h1>/);
    expect(mail.html).toMatch(/<h2[^>]*>ALARM \(1\)<\/h2>/);
    expect(mail.html).toMatch(/<h3[^>]*>Well pit — tripped<\/h3>/);
    expect(mail.html).toMatch(/<tr><th[^>]*>Where<\/th><td[^>]*>Pump house, north paddock<\/td><\/tr>/);
    expect(mail.html).toMatch(/<tr><th[^>]*>Also told<\/th><td[^>]*>On-call phone<\/td><\/tr>/);
    expect(mail.html).toMatch(/<\/td><\/tr><tr><th[^>]*>What it means<\/th>/);
    expect(mail.html).not.toMatch(/<h2[^>]*>TROUBLE/);
    // Each block of markup on a line of its own, so a mail client's source view stays readable.
    expect(mail.html).toMatch(/<\/h1>\n<h2/);
    // The acknowledge button, and the promise that opening it changes nothing (README: web security).
    expect(mail.html).toMatch(/<a href="https:\/\/monitor\.ridgeway\.example\/ack\/[^"]+"[^>]*>Acknowledge…<\/a>/);
    expect(mail.html).toContain('Opens a page where you confirm; opening the link alone changes nothing.');
  });

  it('an entry with nothing to acknowledge ends at its table: no button, no stray text', () => {
    const acked = alarm(1, { loopId: 'well', state: 'acknowledged', ackedAt: t0, ackedBy: 'ann' });
    const mail = composeNoticeMail(digest([notice(1, 'acknowledged', { actor: 'ann' })]), ctx([acked]));
    expect(mail.html).toMatch(/<\/tr><\/table><\/div>/);
    expect(mail.html).not.toContain('Acknowledge…');
  });

  it('without an acknowledge key there is no link, in either part', () => {
    const mail = composeNoticeMail(digest([notice(1)]), { ...ctx([alarm(1, { loopId: 'well' })]), ack: null });
    expect(mail.text).not.toMatch(/Acknowledge:/);
    expect(mail.html).not.toContain('/ack/');
  });

  it('the link lasts web.ack_link_ttl from when the mail is written (README: web), then is refused as expired', () => {
    const now = t0 + 10_000;
    const mail = composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { loopId: 'well' })], {}, now));
    const token = /\/ack\/(\S+)/.exec(mail.text)![1]!;
    const week = 7 * 86_400_000;
    expect(verifyAckToken(token, secret, now + week - 1)).toMatchObject({ ok: true, expiresAt: now + week });
    expect(verifyAckToken(token, secret, now + week)).toEqual({ ok: false, reason: 'expired' });
  });

  it('mails about several threads reply to each, once, separated by a space (RFC 5322 §3.6.4: 1*msg-id)', () => {
    const alarms = [
      alarm(1, { loopId: 'well', threadMessageId: '<t1@pairwatch.ridgeway.example>' }),
      alarm(2, { loopId: 'lambing', threadMessageId: '<t2@pairwatch.ridgeway.example>', raisedAt: t0 + 1 }),
      alarm(3, { loopId: 'tack', threadMessageId: '<t1@pairwatch.ridgeway.example>', raisedAt: t0 + 2 }),
      alarm(4, { loopId: 'bay1', raisedAt: t0 + 3 }),
    ];
    const mail = composeNoticeMail(digest([notice(1), notice(2), notice(3), notice(4)]), ctx(alarms));
    expect(mail.headers['In-Reply-To']).toBe('<t1@pairwatch.ridgeway.example> <t2@pairwatch.ridgeway.example>');
    expect(mail.headers['References']).toBe('<t1@pairwatch.ridgeway.example> <t2@pairwatch.ridgeway.example>');
    expect(mail.headers['Reply-To']).toBeUndefined();
  });

  it('is a notice from the configured sender with the priority of its top entry', () => {
    const mail = composeNoticeMail(digest([notice(1)]), ctx([alarm(1, { loopId: 'lambing', condition: 'open', priority: 'trouble' })]));
    expect(mail).toMatchObject({ kind: 'notice', priority: 'trouble', from: 'pairwatch <monitor@ridgeway.example>', to: ['"Farm office" <office@ridgeway.example>'] });
    expect(mail.messageId).toMatch(/^<msg-\d{4}@pairwatch\.ridgeway\.example>$/);
  });

  it('a digest that names no alarm on record still makes a mail, tagged system, and is not a reminder', () => {
    const empty = composeNoticeMail(digest([{ ...notice(1), alarmId: null }]), ctx([]));
    expect(empty.subject.startsWith('[SYSTEM] Ridgeway Farm: ')).toBe(true);
    expect(empty.alarmIds).toEqual([]);
    expect(composeNoticeMail(digest([]), ctx([])).reminder).toBe(false);
  });

  it('an alarm no longer on record is nothing to reply to: no reference, no Reply-To', () => {
    const reply = { secret, ttlMs: 86_400_000, address: 'monitor@ridgeway.example' };
    const mail = composeNoticeMail(digest([notice(9, 'repeat')]), { ...ctx([]), reply });
    expect(mail.subject).not.toContain('[ref ');
    expect(mail.headers['Reply-To']).toBeUndefined();
  });
});
