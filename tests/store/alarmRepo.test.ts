import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0, makeAlarm } from './storeTestKit.js';

describe('alarmRepo', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let store: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    store = openStore({ path: join(tmp.dir, 'pw.db') });
  });
  afterEach(() => {
    store.close();
    tmp.cleanup();
  });

  it('round-trips every field of an alarm record, and updates it in place', () => {
    const raised = makeAlarm();
    store.alarms.upsert(raised);
    expect(store.alarms.get(1)).toEqual(raised);
    const acked = makeAlarm({
      state: 'acknowledged', ackedAt: T0 + 60_000, ackedBy: 'ann', note: 'heater on in the pump house',
      escalation: { stepsDone: 2, repeatsDone: 1, nextAt: null, notified: ['office', 'oncall'] },
    });
    store.alarms.upsert(acked);
    expect(store.alarms.get(1)).toEqual(acked);
    const shelved = makeAlarm({ id: 2, source: 'office', loopId: null, condition: 'offline', priority: 'trouble', state: 'shelved',
      latched: false, policy: null, shelvedUntil: T0 + 3_600_000, shelveReason: 'decoder being replaced',
      clearedAt: T0 + 5, active: false, closedAt: null });
    store.alarms.upsert(shelved);
    expect(store.alarms.get(2)).toEqual(shelved);
    expect(store.alarms.get(3)).toBeNull();
    expect(store.alarms.maxId()).toBe(2);
  });

  it('reads the column default escalation ({}) as nothing done yet', () => {
    store.db
      .prepare("INSERT INTO alarms (id, source, condition, priority, state, raised_at) VALUES (5, 'system', 'mail-failing', 'system', 'unacknowledged', ?)")
      .run(new Date(T0).toISOString());
    expect(store.alarms.get(5)?.escalation).toEqual({ stepsDone: 0, repeatsDone: 0, nextAt: null, notified: [] });
  });

  it('lists open alarms, active ones and all of them, newest first with paging', () => {
    store.alarms.upsert(makeAlarm({ id: 1, state: 'normal', active: false, closedAt: T0 + 10 }));
    store.alarms.upsert(makeAlarm({ id: 2, state: 'returned-unacknowledged', active: false }));
    store.alarms.upsert(makeAlarm({ id: 3, state: 'out-of-service' }));
    store.alarms.upsert(makeAlarm({ id: 4, state: 'unacknowledged' }));
    expect(store.alarms.listOpen().map((a) => a.id)).toEqual([2, 3, 4]);
    expect(store.alarms.list({ status: 'active', limit: 10 }).map((a) => a.id)).toEqual([4, 2]);
    expect(store.alarms.list({ status: 'all', limit: 2 }).map((a) => a.id)).toEqual([4, 3]);
    expect(store.alarms.list({ status: 'all', limit: 2, afterId: 3 }).map((a) => a.id)).toEqual([2, 1]);
  });

  it('keeps the mail thread id across upserts', () => {
    store.alarms.upsert(makeAlarm());
    expect(store.alarms.threadMessageId(1)).toBeNull();
    store.alarms.setThreadMessageId(1, '<a1.hollow@pairwatch.local>');
    store.alarms.upsert(makeAlarm({ state: 'acknowledged' }));
    expect(store.alarms.threadMessageId(1)).toBe('<a1.hollow@pairwatch.local>');
    expect(store.alarms.threadMessageId(99)).toBeNull();
  });
});
