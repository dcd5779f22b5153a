import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0, makeAlarm } from './storeTestKit.js';

describe('auditRepo', () => {
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

  it('round-trips entries, lists them per alarm, and filters by loop through the alarm', () => {
    store.alarms.upsert(makeAlarm({ id: 1, loopId: 'well-pit' }));
    const raise = { at: T0, actor: 'pairwatch', action: 'raise', alarmId: 1, loopId: null, note: null } as const;
    const ack = { at: T0 + 60_000, actor: 'ann', action: 'acknowledge', alarmId: 1, loopId: 'well-pit', note: 'on my way' } as const;
    const oos = { at: T0 + 30_000, actor: 'bob', action: 'out-of-service', alarmId: null, loopId: 'dairy', note: 'rewiring' } as const;
    const ids = [store.audit.insert(raise), store.audit.insert(ack), store.audit.insert(oos)];
    expect(store.audit.forAlarm(1)).toEqual([{ id: ids[0], ...raise }, { id: ids[1], ...ack }]);
    // The raise row names no loop itself; it belongs to well-pit through its alarm.
    expect(store.audit.list({ loopId: 'well-pit', limit: 10 }).map((e) => e.id)).toEqual([ids[0], ids[1]]);
    expect(store.audit.list({ loopId: 'dairy', limit: 10 })).toEqual([{ id: ids[2], ...oos }]);
    expect(store.audit.list({ since: T0 + 1, until: T0 + 60_000, limit: 10 }).map((e) => e.id)).toEqual([ids[2]]);
    expect(store.audit.list({ limit: 10, afterId: ids[0] }).map((e) => e.id)).toEqual([ids[1], ids[2]]);
  });

  it('refuses an entry for an alarm that was never stored (foreign keys on)', () => {
    expect(() => store.audit.insert({ at: T0, actor: 'x', action: 'raise', alarmId: 42, loopId: null, note: null })).toThrow(/FOREIGN KEY/);
  });
});
