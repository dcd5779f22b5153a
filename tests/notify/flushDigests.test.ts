import { afterEach, describe, expect, it } from 'vitest';
import { flushDigests } from '../../src/notify/flushDigests.js';
import { queueNotices } from '../../src/notify/noticeQueue.js';
import { dueOutbox } from '../../src/store/outboxRepo.js';
import { insertPendingNotice, listPendingNotices } from '../../src/store/pendingNoticeRepo.js';
import { insertAlarm, openTestDb, type TestDb } from './helpers/notifyDb.js';
import { settings } from './helpers/fixtures.js';

const t0 = Date.parse('2026-12-01T03:00:00.000Z');

describe('flushDigests (real SQLite)', () => {
  let t: TestDb;
  afterEach(() => t?.cleanup());

  it('moves due notices into the outbox in one step and leaves the rest waiting', () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['office'], notice: 'raised', actor: null, note: null }, t0, 10_000);
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['oncall'], notice: 'escalated', actor: null, note: null }, t0 + 5_000, 10_000);
    expect(flushDigests(t.db, t0 + 9_999, settings()).messageIds).toEqual([]);
    const flushed = flushDigests(t.db, t0 + 10_000, settings());
    expect(flushed.messageIds).toHaveLength(1);
    expect(listPendingNotices(t.db).map((n) => n.contactId)).toEqual(['oncall']);
    expect(dueOutbox(t.db, t0 + 10_000).map((r) => r.messageId)).toEqual(flushed.messageIds);
  });

  it('a later mail in the same flush replies to the thread the first one started', () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['office', 'oncall'], notice: 'raised', actor: null, note: null }, t0, 0);
    const { messageIds } = flushDigests(t.db, t0, settings());
    const rows = dueOutbox(t.db, t0);
    expect(rows).toHaveLength(2);
    expect(rows[0]!.headers['In-Reply-To']).toBeUndefined();
    expect(rows[1]!.headers['In-Reply-To']).toBe(messageIds[0]);
    expect(rows[0]!.from).toBe('pairwatch <monitor@ridgeway.example>');
  });

  it('notices for a contact no longer configured are audited as not sent, never silently dropped', () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['gone'], notice: 'raised', actor: null, note: null }, t0, 0);
    const result = flushDigests(t.db, t0, settings());
    expect(result).toEqual({ messageIds: [], unknownContacts: ['gone'] });
    const audit = t.db.prepare("SELECT action, alarm_id AS alarmId, note FROM audit WHERE action = 'mail-failed'").all();
    expect(audit).toEqual([{ action: 'mail-failed', alarmId: a, note: 'not sent: contact "gone" is no longer in the configuration' }]);
    expect(listPendingNotices(t.db)).toEqual([]);
  });

  it('rolls everything back when writing the outbox fails, so the notices are still there', () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['office', 'oncall'], notice: 'raised', actor: null, note: null }, t0, 0);
    // Two mails with one Message-ID: the outbox refuses the second (UNIQUE), and nothing of the flush remains.
    const clash = settings({ newMessageId: () => '<same@pairwatch.ridgeway.example>' });
    expect(() => flushDigests(t.db, t0, clash)).toThrow(/UNIQUE/);
    expect(listPendingNotices(t.db)).toHaveLength(2);
    expect(dueOutbox(t.db, t0)).toEqual([]);
    expect((t.db.prepare('SELECT thread_message_id AS id FROM alarms').get() as { id: string | null }).id).toBeNull();
  });

  it('every later mail about an alarm replies to its first mail, not to the one before it (RFC 5322 §3.6.4)', () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    const s = settings();
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['office'], notice: 'raised', actor: null, note: null }, t0, 0);
    const [first] = flushDigests(t.db, t0, s).messageIds;
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['office'], notice: 'repeat', actor: null, note: null }, t0 + 1, 0);
    const [second] = flushDigests(t.db, t0 + 1, s).messageIds;
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['office'], notice: 'repeat', actor: null, note: null }, t0 + 2, 0);
    const [third] = flushDigests(t.db, t0 + 2, s).messageIds;
    const byId = new Map(dueOutbox(t.db, t0 + 2).map((r) => [r.messageId, r]));
    expect(byId.get(second!)!.headers['In-Reply-To']).toBe(first);
    expect(byId.get(third!)!.headers['In-Reply-To']).toBe(first);
    expect(byId.get(third!)!.headers['References']).toBe(first);
  });

  it('each mail says who else was told, from the recipients recorded when the notices were queued', () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['office', 'oncall'], notice: 'raised', actor: null, note: null }, t0, 0);
    flushDigests(t.db, t0, settings());
    const [office, oncall] = dueOutbox(t.db, t0);
    expect(office!.to).toEqual(['"Farm office" <office@ridgeway.example>']);
    expect(office!.text).toMatch(/\n {2}Also told: +On-call phone\n/);
    expect(oncall!.text).toMatch(/\n {2}Also told: +Farm office\n/);
  });

  it('a contact no longer configured: one audit row per alarm, however many notices were waiting about it', () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['gone'], notice: 'raised', actor: null, note: null }, t0, 0);
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['gone'], notice: 'repeat', actor: null, note: null }, t0, 0);
    expect(flushDigests(t.db, t0, settings()).unknownContacts).toEqual(['gone']);
    expect(t.db.prepare("SELECT alarm_id AS alarmId FROM audit WHERE action = 'mail-failed'").all()).toEqual([{ alarmId: a }]);
  });

  it('a waiting notice that names no alarm adds no audit row of its own when its contact is gone', () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['gone'], notice: 'raised', actor: null, note: null }, t0, 0);
    insertPendingNotice(t.db, { contactId: 'gone', alarmId: null, kind: 'repeat', createdAt: t0, dueAt: t0, actor: null, note: null });
    flushDigests(t.db, t0, settings());
    expect(t.db.prepare("SELECT alarm_id AS alarmId FROM audit WHERE action = 'mail-failed'").all()).toEqual([{ alarmId: a }]);
    expect(listPendingNotices(t.db)).toEqual([]);
  });
});
