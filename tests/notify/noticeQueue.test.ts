import { afterEach, describe, expect, it } from 'vitest';
import { planDigests, queueNotices, nextNoticeDueAt } from '../../src/notify/noticeQueue.js';
import type { PendingNotice } from '../../src/alarms/noticeTypes.js';
import { listPendingNotices } from '../../src/store/pendingNoticeRepo.js';
import { recipientsOf } from '../../src/store/alarmRepo.js';
import { insertAlarm, openTestDb, type TestDb } from './helpers/notifyDb.js';

const t0 = Date.parse('2026-12-01T03:00:00.000Z');
const WINDOW = 10_000; // the spec's default grouping window

function notice(partial: Partial<PendingNotice> & Pick<PendingNotice, 'id' | 'contactId' | 'dueAt'>): PendingNotice {
  return { alarmId: partial.id, kind: 'raised', createdAt: partial.dueAt - WINDOW, actor: null, note: null, ...partial };
}

describe('planDigests (pure)', () => {
  it('holds a contact back until their earliest notice is due, then sends everything they have', () => {
    const pending = [
      notice({ id: 1, contactId: 'office', dueAt: t0 + WINDOW }),
      notice({ id: 2, contactId: 'office', dueAt: t0 + WINDOW, createdAt: t0 + 9_000 }),
      notice({ id: 3, contactId: 'oncall', dueAt: t0 + 15_000 }),
    ];
    expect(planDigests(pending, t0 + WINDOW - 1)).toEqual([]);
    const digests = planDigests(pending, t0 + WINDOW);
    expect(digests).toHaveLength(1);
    expect(digests[0]!.contactId).toBe('office');
    expect(digests[0]!.notices.map((n) => n.id)).toEqual([1, 2]);
    expect(planDigests(pending, t0 + 15_000).map((d) => d.contactId)).toEqual(['office', 'oncall']);
  });

  it('a later notice joins an open window even if its own due time is later', () => {
    const pending = [notice({ id: 1, contactId: 'office', dueAt: t0 }), notice({ id: 2, contactId: 'office', dueAt: t0 + 60_000 })];
    expect(planDigests(pending, t0)[0]!.notices.map((n) => n.id)).toEqual([1, 2]);
  });
});

describe('queueNotices (real SQLite)', () => {
  let t: TestDb;
  afterEach(() => t?.cleanup());

  it('writes one row per contact, due when the window closes, and records who was told', () => {
    t = openTestDb();
    const alarmId = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId, contactIds: ['office', 'oncall', 'office'], notice: 'raised', actor: null, note: null }, t0, WINDOW);
    const rows = listPendingNotices(t.db);
    expect(rows.map((r) => [r.contactId, r.dueAt])).toEqual([
      ['office', t0 + WINDOW],
      ['oncall', t0 + WINDOW],
    ]);
    expect(recipientsOf(t.db, alarmId).map((r) => r.contactId).sort()).toEqual(['office', 'oncall']);
    expect(nextNoticeDueAt(t.db)).toBe(t0 + WINDOW);
  });

  it("a contact's window opens with their first notice: later ones share its due time", () => {
    t = openTestDb();
    const a = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    const b = insertAlarm(t.db, { loopId: 'lambing', condition: 'open', priority: 'trouble', raisedAt: t0 + 8_000 });
    queueNotices(t.db, { kind: 'notify', alarmId: a, contactIds: ['office'], notice: 'raised', actor: null, note: null }, t0, WINDOW);
    queueNotices(t.db, { kind: 'notify', alarmId: b, contactIds: ['office'], notice: 'raised', actor: null, note: null }, t0 + 8_000, WINDOW);
    expect(listPendingNotices(t.db).map((r) => r.dueAt)).toEqual([t0 + WINDOW, t0 + WINDOW]);
  });

  it('storm: 8 loops raised within the window become one digest per contact', () => {
    t = openTestDb();
    for (let i = 0; i < 8; i++) {
      const at = t0 + i * 1_000;
      const alarmId = insertAlarm(t.db, { loopId: `bay${i + 1}`, source: 'main', condition: 'offline', priority: 'trouble', raisedAt: at });
      queueNotices(t.db, { kind: 'notify', alarmId, contactIds: ['office', 'oncall'], notice: 'raised', actor: null, note: null }, at, WINDOW);
    }
    const digests = planDigests(listPendingNotices(t.db), t0 + WINDOW);
    expect(digests.map((d) => [d.contactId, d.notices.length])).toEqual([
      ['office', 8],
      ['oncall', 8],
    ]);
  });

  it('window 0 sends at once', () => {
    t = openTestDb();
    const alarmId = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId, contactIds: ['office'], notice: 'raised', actor: null, note: null }, t0, 0);
    expect(planDigests(listPendingNotices(t.db), t0)).toHaveLength(1);
  });

  it('keeps the actor and note of an acknowledgement notice', () => {
    t = openTestDb();
    const alarmId = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId, contactIds: ['office'], notice: 'acknowledged', actor: 'ann', note: 'on my way' }, t0, WINDOW);
    expect(listPendingNotices(t.db)[0]).toMatchObject({ kind: 'acknowledged', actor: 'ann', note: 'on my way', alarmId });
  });

  it('a negative window (never accepted from the config) is read as 0: due at once, never in the past', () => {
    t = openTestDb();
    const alarmId = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId, contactIds: ['office'], notice: 'raised', actor: null, note: null }, t0, -5_000);
    expect(listPendingNotices(t.db).map((r) => r.dueAt)).toEqual([t0]);
  });

  it('records when each contact was told, and each contact once', () => {
    t = openTestDb();
    const alarmId = insertAlarm(t.db, { loopId: 'well', condition: 'tripped', priority: 'alarm', raisedAt: t0 });
    queueNotices(t.db, { kind: 'notify', alarmId, contactIds: ['office', 'office'], notice: 'raised', actor: null, note: null }, t0 + 7, WINDOW);
    expect(recipientsOf(t.db, alarmId)).toEqual([{ alarmId, contactId: 'office', firstQueuedAt: t0 + 7 }]);
    expect(listPendingNotices(t.db)).toEqual([expect.objectContaining({ contactId: 'office', createdAt: t0 + 7, dueAt: t0 + 7 + WINDOW, kind: 'raised' })]);
  });
});
