import { afterEach, describe, expect, it } from 'vitest';
import { planDigests, queueNotices } from '../../src/notify/noticeQueue.js';
import { mailFooterHtml, mailFooterText, SAFETY_CAUTION } from '../../src/notify/mailLayout.js';
import type { PendingNotice } from '../../src/alarms/noticeTypes.js';
import { listPendingNotices } from '../../src/store/pendingNoticeRepo.js';
import { insertAlarm, openTestDb, type TestDb } from './helpers/notifyDb.js';

/**
 * The order mails are written in and the order of notices inside one (the mail's headline is the
 * latest notice, so the order is what the reader is told first), whatever order the store hands them
 * over in; and the footer every mail ends with (README "Mail that is never lost" and Cautions: the
 * board's address, whether replies are read, and that this is property monitoring, not life safety).
 */

const t0 = Date.parse('2026-12-01T03:00:00.000Z');
const notice = (id: number, contactId: string, createdAt: number, dueAt: number, kind: PendingNotice['kind'] = 'raised'): PendingNotice =>
  ({ id, contactId, alarmId: 1, kind, createdAt, dueAt, actor: null, note: null });

describe('planDigests order', () => {
  it('notices of one contact in the order they were made (then by id), however they were handed over', () => {
    const pending = [notice(5, 'office', t0 + 2000, t0 + 10_000, 'acknowledged'), notice(4, 'office', t0 + 1000, t0 + 10_000, 'escalated'), notice(3, 'office', t0 + 1000, t0 + 10_000), notice(2, 'office', t0, t0 + 10_000)];
    expect(planDigests(pending, t0 + 10_000)[0]!.notices.map((n) => [n.id, n.kind])).toEqual([[2, 'raised'], [3, 'raised'], [4, 'escalated'], [5, 'acknowledged']]);
  });

  it('mails in the order they fell due, then by contact id', () => {
    const pending = [notice(1, 'vet', t0, t0 + 9000), notice(2, 'oncall', t0, t0 + 8000), notice(3, 'office', t0, t0 + 9000), notice(4, 'barn', t0, t0 + 9000), notice(5, 'office', t0, t0 + 9000)];
    expect(planDigests(pending, t0 + 10_000).map((d) => [d.contactId, d.dueAt - t0])).toEqual([['oncall', 8000], ['barn', 9000], ['office', 9000], ['vet', 9000]]);
  });
});

describe('planDigests order, many contacts', () => {
  it('contacts due at the same moment go in contact-id order, whatever order they were handed over in', () => {
    const ids = ['vet', 'barn', 'oncall', 'yard', 'office', 'dairy', 'apiary', 'mill'];
    const pending = ids.map((id, i) => notice(i + 1, id, t0, t0 + 9000));
    expect(planDigests(pending, t0 + 10_000).map((d) => d.contactId)).toEqual(['apiary', 'barn', 'dairy', 'mill', 'office', 'oncall', 'vet', 'yard']);
    expect(planDigests([...pending].reverse(), t0 + 10_000).map((d) => d.contactId)).toEqual(['apiary', 'barn', 'dairy', 'mill', 'office', 'oncall', 'vet', 'yard']);
  });
});

describe('queueNotices (real SQLite)', () => {
  let t: TestDb;
  afterEach(() => t?.cleanup());
  it('returns the ids of the rows it queued, one per contact', () => {
    t = openTestDb();
    const alarmId = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    const ids = queueNotices(t.db, { kind: 'notify', alarmId, contactIds: ['office', 'oncall', 'office'], notice: 'raised', actor: null, note: null }, t0, 10_000);
    expect(ids).toEqual(listPendingNotices(t.db).map((r) => r.id));
    expect(ids).toHaveLength(2);
  });
});

describe('the mail footer', () => {
  it('text: who sent it, that replies are not read, the board, and the caution', () => {
    expect(mailFooterText('Ridgeway Farm', 'https://monitor.ridgeway.example')).toBe(
      `--\nSent automatically by pairwatch at Ridgeway Farm; replies are not read.\nThe board: https://monitor.ridgeway.example/\n${SAFETY_CAUTION}`,
    );
    expect(mailFooterText('Ridgeway Farm', 'https://monitor.ridgeway.example', true)).toContain('; a reply is read by the monitor, not by a person.\n');
    expect(SAFETY_CAUTION).toContain('property monitoring, not a life-safety system');
  });

  it('HTML: the same, the board as a link, the site name escaped', () => {
    const html = mailFooterHtml('Ridgeway <Farm>', 'https://monitor.ridgeway.example');
    expect(html).toContain('Sent automatically by pairwatch at Ridgeway &lt;Farm&gt;; replies are not read.');
    expect(html).toContain('<a href="https://monitor.ridgeway.example/">https://monitor.ridgeway.example/</a>');
    expect(html).toContain(SAFETY_CAUTION);
    expect(mailFooterHtml('Ridgeway Farm', 'https://monitor.ridgeway.example', true)).toContain('a reply is read by the monitor, not by a person');
  });
});
