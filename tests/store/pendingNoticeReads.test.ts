import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { contactWindowDueAt, insertPendingNotice, loadNoticeAlarms, nextPendingNoticeDueAt } from '../../src/store/pendingNoticeRepo.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0, makeAlarm } from './storeTestKit.js';

/** The notice queue's reads as the mailer meets them: nothing waiting is null, not a date; unknown alarms are left out. */
let tmp: ReturnType<typeof makeTempDir>;
let store: Store;
beforeEach(() => {
  tmp = makeTempDir('pw-notice-reads-');
  store = openStore({ path: join(tmp.dir, 'site.db') });
});
afterEach(() => {
  store.close();
  tmp.cleanup();
});

describe('pending notice reads', () => {
  it('a contact with nothing waiting has no open window; the queue with nothing in it has no next time', () => {
    expect(contactWindowDueAt(store.db, 'office')).toBeNull();
    expect(nextPendingNoticeDueAt(store.db)).toBeNull();
    store.alarms.upsert(makeAlarm({ id: 1 }));
    insertPendingNotice(store.db, { contactId: 'office', alarmId: 1, kind: 'raised', createdAt: T0, dueAt: T0 + 10_000, actor: null, note: null });
    expect(contactWindowDueAt(store.db, 'office')).toBe(T0 + 10_000);
    expect(contactWindowDueAt(store.db, 'oncall')).toBeNull();
    expect(nextPendingNoticeDueAt(store.db)).toBe(T0 + 10_000);
  });

  it('loads each alarm a batch names once, and leaves out alarms not on record', () => {
    store.alarms.upsert(makeAlarm({ id: 1 }));
    store.alarms.setThreadMessageId(1, '<a1@example.org>');
    const alarms = loadNoticeAlarms(store.db, [1, 42, 1]);
    expect(alarms.map((a) => [a.id, a.condition, a.threadMessageId])).toEqual([[1, 'tripped', '<a1@example.org>']]);
    expect(loadNoticeAlarms(store.db, [42])).toEqual([]);
  });
});
