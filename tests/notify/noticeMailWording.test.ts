import { describe, expect, it } from 'vitest';
import { composeNoticeMail, REPLY_HINT, type NoticeComposeContext } from '../../src/notify/composeNoticeMail.js';
import type { Digest, NoticeAlarm, PendingNotice } from '../../src/alarms/noticeTypes.js';
import { sampleNoticeAlarm } from '../helpers/sampleAlarm.js';
import { checkReplyToken } from '../../src/notify/replyToken.js';
import { secret, settings } from './helpers/fixtures.js';

/**
 * What a notice mail says for each kind of notice and each way an alarm can stand, in the words the
 * README's "Alarms, trouble and mail" section gives: the subject starts with the priority and the site,
 * then the loop and what happened; an alarm that is back to normal but unacknowledged reads "back to
 * normal — still needs acknowledging"; the body has where, what to check, since when and who else was
 * told. Every expected line below is written out by hand. Site, loops and people: the invented fixtures.
 */

const t0 = Date.parse('2026-12-01T03:00:00.000Z');
const MIN = 60_000;
const shared = settings();

function alarm(partial: Partial<NoticeAlarm> = {}): NoticeAlarm {
  return sampleNoticeAlarm(t0, { id: 1, source: 'well', loopId: 'well', ...partial });
}
let noticeId = 0;
function notice(alarmId: number, kind: PendingNotice['kind'], extra: Partial<PendingNotice> = {}): PendingNotice {
  return { id: ++noticeId, contactId: 'office', alarmId, kind, createdAt: t0, dueAt: t0 + 10_000, actor: null, note: null, ...extra };
}
function ctx(alarms: NoticeAlarm[], extra: Partial<NoticeComposeContext> = {}, recipients: Record<number, string[]> = {}): NoticeComposeContext {
  return {
    ...shared,
    now: t0 + 65 * MIN,
    alarms: new Map(alarms.map((a) => [a.id, a])),
    recipients: new Map(Object.entries(recipients).map(([k, v]) => [Number(k), v])),
    ...extra,
  };
}
const digest = (notices: PendingNotice[], contactId = 'office'): Digest => ({ contactId, dueAt: t0 + 10_000, notices });
const mailFor = (a: NoticeAlarm, n: PendingNotice, extra: Partial<NoticeComposeContext> = {}) => composeNoticeMail(digest([n]), ctx([a], extra));
/** The value of one labelled row in the text part ("  Label:        value"). */
const row = (text: string, label: string) => text.split('\n').find((l) => l.startsWith(`  ${label}:`))?.slice(18) ?? null;

describe('the subject of a mail about one alarm', () => {
  const cases: Array<[string, Partial<NoticeAlarm>, PendingNotice['kind'], Partial<PendingNotice>, string]> = [
    ['raised', {}, 'raised', {}, 'tripped'],
    ['a raise of an alarm already back to normal', { active: false, clearedAt: t0 + MIN, state: 'returned-unacknowledged' }, 'raised', {}, 'tripped, back to normal — still needs acknowledging'],
    ['escalated', {}, 'escalated', {}, 'tripped, not acknowledged'],
    ['a repeat', {}, 'repeat', {}, 'tripped, not acknowledged'],
    ['a repeat of a latched alarm whose condition has gone', { active: false, clearedAt: t0 + MIN }, 'repeat', {}, 'tripped, back to normal — still needs acknowledging'],
    ['acknowledged, naming who', { state: 'acknowledged', ackedAt: t0 + MIN, ackedBy: 'ann' }, 'acknowledged', { actor: 'ann' }, 'tripped, acknowledged by ann'],
    ['acknowledged with nobody named', { state: 'acknowledged', ackedAt: t0 + MIN }, 'acknowledged', {}, 'tripped, acknowledged'],
    ['cleared and closed', { state: 'normal', active: false, clearedAt: t0 + 2 * MIN, ackedAt: t0 + MIN, ackedBy: 'ann' }, 'cleared', {}, 'back to normal'],
    ['cleared before anyone acknowledged', { state: 'returned-unacknowledged', active: false, clearedAt: t0 + 2 * MIN }, 'cleared', {}, 'back to normal — still needs acknowledging'],
    ['cleared, but present again when the mail is written', { state: 'unacknowledged', active: true }, 'cleared', {}, 'tripped, back again after clearing'],
    ['shelved', { state: 'shelved', shelvedUntil: t0 + 120 * MIN, shelveReason: 'heater being fitted' }, 'shelved', { actor: 'ann' }, 'tripped, shelved'],
    ['back from the shelf', {}, 'unshelved', {}, 'tripped, back from shelving'],
    ['back from the shelf, condition gone', { active: false, clearedAt: t0 + MIN, state: 'returned-unacknowledged' }, 'unshelved', {}, 'tripped, back to normal — still needs acknowledging'],
  ];
  for (const [what, partial, kind, extra, headline] of cases) {
    it(`${what}: "${headline}"`, () => {
      expect(mailFor(alarm(partial), notice(1, kind, extra)).subject).toBe(`[ALARM] Ridgeway Farm: Well pit — ${headline}`);
    });
  }

  it('names a decoder by its configured name, else by its id; the monitor itself as Monitor; an unconfigured loop by its id', () => {
    const offline = (source: string) => alarm({ source, loopId: null, condition: 'offline', priority: 'trouble' });
    expect(mailFor(offline('main'), notice(1, 'raised')).subject).toBe('[TROUBLE] Ridgeway Farm: Office decoder — decoder offline');
    const bare = { decoders: [{ id: 'yard' }] };
    expect(mailFor(offline('yard'), notice(1, 'raised'), bare).subject).toBe('[TROUBLE] Ridgeway Farm: Decoder yard — decoder offline');
    expect(mailFor(offline('attic'), notice(1, 'raised')).subject).toBe('[TROUBLE] Ridgeway Farm: attic — decoder offline');
    expect(mailFor(alarm({ source: 'system', loopId: null, condition: 'mail-failing', priority: 'system' }), notice(1, 'raised')).subject).toBe('[SYSTEM] Ridgeway Farm: Monitor — mail failing');
    expect(mailFor(alarm({ source: 'silo', loopId: 'silo' }), notice(1, 'raised')).subject).toBe('[ALARM] Ridgeway Farm: Loop silo — tripped');
  });

  it('an alarm no longer on record is named by its number and says so', () => {
    const mail = composeNoticeMail(digest([notice(7, 'escalated')]), ctx([]));
    expect(mail.subject).toBe('[SYSTEM] Ridgeway Farm: Alarm #7 — alarm #7 (no longer on record)');
    expect(row(mail.text, 'Note')).toBe('This alarm is no longer on record; see the board for the current state.');
    expect(mail.text).toContain('\nAlarm #7\n  Note:');
  });

  it('a mail about a missing alarm and one on record names both, whatever order they were queued in', () => {
    const system = alarm({ id: 2, source: 'system', loopId: null, condition: 'mail-failing', priority: 'system' });
    const mail = composeNoticeMail(digest([notice(2, 'raised'), notice(7, 'repeat')]), ctx([system]));
    expect(mail.subject).toMatch(/^\[SYSTEM\] Ridgeway Farm: 2 conditions — /);
    expect(mail.subject).toContain('Alarm #7 alarm #7 (no longer on record)');
    expect(mail.subject).toContain('Monitor mail failing');
    expect([...mail.alarmIds].sort()).toEqual([2, 7]);
    const reversed = composeNoticeMail(digest([notice(7, 'repeat'), notice(2, 'raised')]), ctx([system]));
    expect(reversed.subject).toContain('Alarm #7 alarm #7 (no longer on record)');
    expect([...reversed.alarmIds].sort()).toEqual([2, 7]);
  });

  it('alarms of one priority raised at the same moment are listed by alarm number', () => {
    const same = [3, 1, 4, 2, 5].map((id) => alarm({ id, source: `bay${id}`, loopId: `bay${id}` }));
    const mail = composeNoticeMail(digest([3, 1, 4, 2, 5].map((id) => notice(id, 'raised'))), ctx(same));
    expect(mail.alarmIds).toEqual([1, 2, 3, 4, 5]);
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: 5 conditions — Hay bay 1 tripped, Hay bay 2 tripped, Hay bay 3 tripped, Hay bay 4 tripped, Hay bay 5 tripped');
  });

  it('without any decoders configured, a decoder alarm is named by its source and still gets advice', () => {
    const mail = mailFor(alarm({ source: 'yard', loopId: null, condition: 'offline', priority: 'trouble' }), notice(1, 'raised'), { decoders: undefined });
    expect(mail.subject).toBe('[TROUBLE] Ridgeway Farm: yard — decoder offline');
    expect(row(mail.text, 'What to check')).toMatch(/\S/);
  });
});

describe('the subject of a mail about several alarms', () => {
  it('lists each in its short form, alarms first, then by when they were raised', () => {
    const alarms = [
      alarm({ id: 1, state: 'acknowledged', ackedAt: t0 + MIN, ackedBy: 'ann' }),
      alarm({ id: 2, source: 'lambing', loopId: 'lambing', condition: 'open', priority: 'trouble', raisedAt: t0 - MIN, state: 'shelved', shelvedUntil: t0 + HOUR_MS, shelveReason: 'r' }),
      alarm({ id: 3, source: 'tack', loopId: 'tack', raisedAt: t0 + MIN }),
      alarm({ id: 4, source: 'bay1', loopId: 'bay1', raisedAt: t0 - 2 * MIN }),
      alarm({ id: 5, source: 'bay2', loopId: 'bay2', raisedAt: t0 - 2 * MIN }),
    ];
    const all = [notice(1, 'acknowledged', { actor: 'ann' }), notice(2, 'shelved'), notice(3, 'cleared'), notice(4, 'unshelved'), notice(5, 'escalated')];
    const first = composeNoticeMail(digest([all[0]!, all[3]!, all[4]!]), ctx(alarms));
    expect(first.subject).toBe('[ALARM] Ridgeway Farm: 3 conditions — Hay bay 1 tripped (unshelved), Hay bay 2 tripped, Well pit tripped (acknowledged)');
    const second = composeNoticeMail(digest([all[1]!, all[2]!]), ctx(alarms));
    expect(second.subject).toBe('[ALARM] Ridgeway Farm: 2 conditions — Tack room <east> tripped (back again), Lambing shed open circuit (shelved)');
    // All five do not fit in 160 characters: the rest are counted, not cut mid-name.
    const mail = composeNoticeMail(digest(all), ctx(alarms));
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: 5 conditions — Hay bay 1 tripped (unshelved), Hay bay 2 tripped, Well pit tripped (acknowledged), and 2 more');
    expect(mail.alarmIds).toEqual([4, 5, 1, 3, 2]);
  });
});
const HOUR_MS = 60 * MIN;

describe('the body rows', () => {
  it('an escalation says why you are told; a repeat how long it has gone unacknowledged', () => {
    expect(row(mailFor(alarm(), notice(1, 'escalated')).text, 'Why you')).toBe('Nobody has acknowledged this yet, so you are now told too.');
    // Raised at 03:00, mail written at 04:05.
    expect(row(mailFor(alarm(), notice(1, 'repeat')).text, 'Reminder')).toBe('Still not acknowledged after 1 h 5 min.');
    expect(row(mailFor(alarm(), notice(1, 'raised')).text, 'Why you')).toBeNull();
    expect(row(mailFor(alarm(), notice(1, 'raised')).text, 'Reminder')).toBeNull();
  });

  it('an acknowledgement without a note says "(none)"; with one, the note in quotation marks', () => {
    const acked = alarm({ state: 'acknowledged', ackedAt: t0 + MIN, ackedBy: 'ann' });
    const plain = mailFor(acked, notice(1, 'acknowledged', { actor: 'ann' })).text;
    expect(row(plain, 'Acknowledged')).toBe('by ann at Tue 1 Dec 2026, 03:01:00 GMT (2026-12-01 03:01:00 UTC)');
    expect(row(plain, 'Their note')).toBe('(none)');
    expect(row(mailFor(acked, notice(1, 'acknowledged', { actor: 'ann', note: '  ' })).text, 'Their note')).toBe('(none)');
    expect(row(mailFor(acked, notice(1, 'acknowledged', { actor: 'ann', note: 'heater off' })).text, 'Their note')).toBe('“heater off”');
    // The acknowledgement's own notice came without a time: who, and no time.
    expect(row(mailFor(alarm(), notice(1, 'acknowledged', { actor: 'bob' })).text, 'Acknowledged')).toBe('by bob');
  });

  it('a shelved alarm says until when, by whom and why, and that it comes back by itself', () => {
    const shelved = alarm({ state: 'shelved', shelvedUntil: t0 + 120 * MIN, shelveReason: 'heater being fitted' });
    const text = mailFor(shelved, notice(1, 'shelved', { actor: 'ann' })).text;
    expect(row(text, 'Shelved')).toBe('until Tue 1 Dec 2026, 05:00:00 GMT (2026-12-01 05:00:00 UTC) by ann: “heater being fitted”');
    expect(row(text, 'Status')).toBe('shelved (hidden for a while, comes back by itself)');
    // Told by the monitor (no actor), and with no reason kept: neither is made up.
    const bare = mailFor(alarm({ state: 'shelved', shelvedUntil: t0 + 120 * MIN, shelveReason: null }), notice(1, 'repeat')).text;
    expect(row(bare, 'Shelved')).toBe('until Tue 1 Dec 2026, 05:00:00 GMT (2026-12-01 05:00:00 UTC)');
  });

  it('status words for an alarm on a loop out of service and for a closed one', () => {
    expect(row(mailFor(alarm({ state: 'out-of-service' }), notice(1, 'raised')).text, 'Status')).toBe('loop out of service');
    const closed = alarm({ state: 'normal', active: false, clearedAt: t0 + 2 * MIN, ackedAt: t0 + MIN, ackedBy: 'ann' });
    const text = mailFor(closed, notice(1, 'cleared')).text;
    expect(row(text, 'Status')).toBe('closed: back to normal and acknowledged');
    expect(row(text, 'Back to normal')).toBe('Tue 1 Dec 2026, 03:02:00 GMT (2026-12-01 03:02:00 UTC)');
  });

  it('"Also told" leaves out the reader, names the others, and says when there is nobody else', () => {
    expect(row(mailFor(alarm(), notice(1, 'raised')).text, 'Also told')).toBe('nobody else so far');
    const mail = composeNoticeMail(digest([notice(1, 'raised')]), ctx([alarm()], {}, { 1: ['office', 'oncall', 'ghost'] }));
    expect(row(mail.text, 'Also told')).toBe('On-call phone, ghost');
  });
});

describe('acknowledging by reply (mail.imap)', () => {
  const reply = { secret, ttlMs: 86_400_000, address: 'monitor@ridgeway.example' };

  it('an alarm waiting for acknowledgement: the reference rides in the subject and the body, and replies go to the monitor', () => {
    const mail = mailFor(alarm(), notice(1, 'raised'), { reply });
    const ref = /\[ref (\S+)\]$/.exec(mail.subject)?.[1];
    expect(ref).toBeTruthy();
    expect(mail.subject).toBe(`[ALARM] Ridgeway Farm: Well pit — tripped [ref ${ref}]`);
    expect(mail.headers['Reply-To']).toBe('monitor@ridgeway.example');
    expect(mail.text).toContain(`${REPLY_HINT}\nReference: ${ref}\n`);
    expect(REPLY_HINT).toBe('Reply with OK to acknowledge (you may add a note).');
    expect(mail.text).toContain('a reply is read by the monitor, not by a person');
  });

  it('with reply_tag the reference is also the address\'s subaddress (RFC 5233)', () => {
    const mail = mailFor(alarm(), notice(1, 'raised'), { reply: { ...reply, tagAddress: true } });
    const ref = /\[ref (\S+)\]$/.exec(mail.subject)![1]!;
    expect(mail.headers['Reply-To']).toBe(`monitor+${ref}@ridgeway.example`);
  });

  it('nothing left to acknowledge: no reference and no Reply-To', () => {
    const acked = alarm({ state: 'acknowledged', ackedAt: t0 + MIN, ackedBy: 'ann' });
    const mail = mailFor(acked, notice(1, 'acknowledged', { actor: 'ann' }), { reply });
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped, acknowledged by ann');
    expect(mail.headers['Reply-To']).toBeUndefined();
    expect(mail.text).not.toContain(REPLY_HINT);
  });
});

describe('more body rows', () => {
  it('an alarm nobody has acknowledged has no "Acknowledged" and no "Back to normal" row; "What it means" is there', () => {
    const text = mailFor(alarm(), notice(1, 'raised')).text;
    expect(row(text, 'Acknowledged')).toBeNull();
    expect(row(text, 'Their note')).toBeNull();
    expect(row(text, 'Back to normal')).toBeNull();
    expect(row(text, 'What it means')).toMatch(/^tripped: /);
  });

  it('an acknowledgement by nobody named reads "by someone"', () => {
    const acked = alarm({ state: 'acknowledged', ackedAt: t0 + MIN });
    expect(row(mailFor(acked, notice(1, 'acknowledged')).text, 'Acknowledged')).toBe('by someone at Tue 1 Dec 2026, 03:01:00 GMT (2026-12-01 03:01:00 UTC)');
  });

  it('"Since" gives the raise time in the site zone and UTC, and how long ago', () => {
    // Raised 03:00 UTC (03:00 GMT in December), mail written 04:05.
    expect(row(mailFor(alarm(), notice(1, 'raised')).text, 'Since')).toBe('Tue 1 Dec 2026, 03:00:00 GMT (2026-12-01 03:00:00 UTC), 1 h 5 min ago');
  });

  it('"Loop" gives the loop id when the name differs from it, and is left out when it would repeat the name or there is no loop', () => {
    expect(row(mailFor(alarm(), notice(1, 'raised')).text, 'Loop')).toBe('well');
    const sameName = { loops: [{ id: 'silo', name: 'silo', location: 'Yard' }] };
    const silo = mailFor(alarm({ source: 'silo', loopId: 'silo' }), notice(1, 'raised'), sameName).text;
    expect(row(silo, 'Loop')).toBeNull();
    expect(row(silo, 'Where')).toBe('Yard');
    const decoder = mailFor(alarm({ source: 'main', loopId: null, condition: 'offline', priority: 'trouble' }), notice(1, 'raised')).text;
    expect(row(decoder, 'Loop')).toBeNull();
    expect(row(decoder, 'Where')).toBeNull();
  });

  it('a mail about an alarm acknowledged earlier names who acknowledged it and their note, from the alarm itself', () => {
    const closed = alarm({ state: 'normal', active: false, clearedAt: t0 + 2 * MIN, ackedAt: t0 + MIN, ackedBy: 'ann', note: 'heater reset' });
    const text = mailFor(closed, notice(1, 'cleared')).text;
    expect(row(text, 'Acknowledged')).toBe('by ann at Tue 1 Dec 2026, 03:01:00 GMT (2026-12-01 03:01:00 UTC)');
    expect(row(text, 'Their note')).toBe('“heater reset”');
    // A note carried by a notice that is not the acknowledgement is not the acknowledger's note.
    expect(row(mailFor(closed, notice(1, 'cleared', { note: 'cable fixed' })).text, 'Their note')).toBe('“heater reset”');
    // The acknowledgement's own note wins over the one stored on the alarm.
    const acked = alarm({ state: 'acknowledged', ackedAt: t0 + MIN, ackedBy: 'ann', note: 'older note' });
    expect(row(mailFor(acked, notice(1, 'acknowledged', { actor: 'ann', note: 'on my way' })).text, 'Their note')).toBe('“on my way”');
    expect(row(mailFor(acked, notice(1, 'acknowledged', { actor: 'ann' })).text, 'Their note')).toBe('“older note”');
  });

  it('the acknowledgement notice names who acted, even when the alarm row names someone else', () => {
    const acked = alarm({ state: 'acknowledged', ackedAt: t0 + MIN, ackedBy: 'Farm office (mail link)' });
    const mail = mailFor(acked, notice(1, 'acknowledged', { actor: 'ann' }));
    expect(mail.subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped, acknowledged by ann');
    expect(mailFor(acked, notice(1, 'acknowledged')).subject).toBe('[ALARM] Ridgeway Farm: Well pit — tripped, acknowledged by Farm office (mail link)');
  });

  it('a person\'s words keep to one line: every kind of line break becomes one space', () => {
    const acked = alarm({ state: 'acknowledged', ackedAt: t0 + MIN, ackedBy: 'ann' });
    const text = mailFor(acked, notice(1, 'acknowledged', { actor: 'ann', note: 'pipes\r\n\r\nok\u2028now\u2029fine\nthanks' })).text;
    expect(row(text, 'Their note')).toBe('“pipes ok now fine thanks”');
  });

  it('a shelving by the monitor names nobody; an alarm not shelved has no "Shelved" row even with a shelf time left on it', () => {
    const shelved = alarm({ state: 'shelved', shelvedUntil: t0 + 120 * MIN, shelveReason: null });
    expect(row(mailFor(shelved, notice(1, 'shelved')).text, 'Shelved')).toBe('until Tue 1 Dec 2026, 05:00:00 GMT (2026-12-01 05:00:00 UTC)');
    // The shelving's actor is named only on the mail about the shelving itself.
    expect(row(mailFor(shelved, notice(1, 'repeat', { actor: 'ann' })).text, 'Shelved')).toBe('until Tue 1 Dec 2026, 05:00:00 GMT (2026-12-01 05:00:00 UTC)');
    expect(row(mailFor(alarm({ shelvedUntil: t0 + 120 * MIN }), notice(1, 'unshelved')).text, 'Shelved')).toBeNull();
    expect(row(mailFor(alarm({ state: 'shelved', shelvedUntil: null }), notice(1, 'shelved')).text, 'Shelved')).toBeNull();
  });

  it('rows line up: each label and its colon padded to 16 characters after a two-space indent', () => {
    const lines = mailFor(alarm(), notice(1, 'raised')).text.split('\n').filter((l) => /^ {2}[A-Z][a-z ]+:/.test(l));
    expect(lines.length).toBeGreaterThanOrEqual(6);
    for (const line of lines) expect(line[18], line).not.toBe(' ');
    // "Status:" is 7 characters, so 9 spaces follow it.
    expect(lines.find((l) => l.startsWith('  Status:'))).toBe('  Status:         active, not acknowledged');
  });
});

describe('subject length', () => {
  // The project's limit (common practice: about what a phone's mail list shows on two lines): 160 characters.
  const two = (a: string, b: string) => ({ loops: [{ id: 'a', name: a, location: null }, { id: 'b', name: b, location: null }] });
  const both = [alarm({ id: 1, source: 'a', loopId: 'a' }), alarm({ id: 2, source: 'b', loopId: 'b' })];
  const mail = (a: string, b: string) => composeNoticeMail(digest([notice(1, 'raised'), notice(2, 'raised')]), ctx(both, two(a, b)));

  it('a list that comes to exactly 160 characters is kept whole; one more character and the last is counted instead', () => {
    const a = 'A'.repeat(52);
    const whole = `[ALARM] Ridgeway Farm: 2 conditions — ${a} tripped, ${'B'.repeat(52)} tripped`;
    expect(whole).toHaveLength(160);
    expect(mail(a, 'B'.repeat(52)).subject).toBe(whole);
    expect(mail(a, 'B'.repeat(53)).subject).toBe(`[ALARM] Ridgeway Farm: 2 conditions — ${a} tripped, and 1 more`);
  });

  it('a middle condition is kept only when the count of those after it still fits ("and 1 more" is 12 characters)', () => {
    const three = { loops: ['a', 'b', 'c'].map((id, i) => ({ id, name: ['A'.repeat(46), 'B'.repeat(46), 'Cow shed'][i]!, location: null })) };
    const alarms = ['a', 'b', 'c'].map((id, i) => alarm({ id: i + 1, source: id, loopId: id }));
    const subject = composeNoticeMail(digest([notice(1, 'raised'), notice(2, 'raised'), notice(3, 'raised')]), ctx(alarms, three)).subject;
    const expected = `[ALARM] Ridgeway Farm: 3 conditions — ${'A'.repeat(46)} tripped, ${'B'.repeat(46)} tripped, and 1 more`;
    expect(expected).toHaveLength(160);
    expect(subject).toBe(expected);
  });

  it('the first condition is always named, however long its name', () => {
    const long = 'L'.repeat(170);
    expect(mail(long, 'Short').subject).toBe(`[ALARM] Ridgeway Farm: 2 conditions — ${long} tripped, and 1 more`);
  });
});

describe('replies carry a reference that only this mail and this contact can use', () => {
  const reply = { secret, ttlMs: 86_400_000, address: 'monitor@ridgeway.example' };

  it('the reference verifies for the mail\'s Message-ID and its contact until web.ack_link_ttl has passed (README: mail.imap)', () => {
    const now = t0 + 65 * MIN;
    const mail = mailFor(alarm(), notice(1, 'raised'), { reply });
    const ref = /\[ref (\S+)\]$/.exec(mail.subject)![1]!;
    const claims = { messageId: mail.messageId, recipient: 'office' };
    expect(checkReplyToken(ref, claims, secret, now + 86_400_000 - 1)).toEqual({ ok: true, expiresAt: now + 86_400_000 });
    expect(checkReplyToken(ref, claims, secret, now + 86_400_000)).toEqual({ ok: false, reason: 'expired' });
    expect(checkReplyToken(ref, { ...claims, recipient: 'oncall' }, secret, now)).toEqual({ ok: false, reason: 'forged' });
    expect(checkReplyToken(ref, { ...claims, messageId: '<other@pairwatch.ridgeway.example>' }, secret, now)).toEqual({ ok: false, reason: 'forged' });
  });

  it('one alarm still waiting among others already acknowledged is enough for a reference; the hint ends before the footer', () => {
    const waiting = alarm({ id: 2, source: 'lambing', loopId: 'lambing', raisedAt: t0 + MIN });
    const acked = alarm({ state: 'acknowledged', ackedAt: t0 + MIN, ackedBy: 'ann' });
    const mail = composeNoticeMail(digest([notice(1, 'acknowledged', { actor: 'ann' }), notice(2, 'raised')]), ctx([acked, waiting], { reply }));
    const ref = /\[ref (\S+)\]$/.exec(mail.subject)?.[1];
    expect(ref).toBeTruthy();
    expect(mail.text).toContain(`\nReference: ${ref}\n\n--\n`);
  });

  it('the HTML part says the same, and its footer says a reply is read', () => {
    const mail = mailFor(alarm(), notice(1, 'raised'), { reply });
    const ref = /\[ref (\S+)\]$/.exec(mail.subject)![1]!;
    expect(mail.html).toContain(`<strong>${REPLY_HINT}</strong>`);
    expect(mail.html).toContain(`Reference: ${ref}`);
    expect(mail.html).toContain('a reply is read by the monitor, not by a person');
    expect(mail.html).not.toContain('replies are not read');
    // Without mail.imap the footer says the opposite, in both parts.
    const plain = mailFor(alarm(), notice(1, 'raised'));
    expect(plain.html).toContain('replies are not read');
    expect(plain.text).toContain('replies are not read');
  });
});
