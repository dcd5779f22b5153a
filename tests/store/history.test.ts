import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { TimelineEvent } from '../../src/store/history.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { isStoreError } from '../../src/store/storeError.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0, makeAlarm } from './storeTestKit.js';

function allPages(store: Store, query: Omit<Parameters<Store['events']['list']>[0], 'cursor'>): TimelineEvent[] {
  const out: TimelineEvent[] = [];
  let cursor: string | undefined;
  for (let guard = 0; guard < 1000; guard++) {
    const page = store.events.list({ ...query, ...(cursor !== undefined && { cursor }) });
    out.push(...page.items);
    if (!page.nextCursor) return out;
    cursor = page.nextCursor;
  }
  throw new Error('paging did not end');
}

describe('eventsQuery', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let store: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    store = openStore({ path: join(tmp.dir, 'pw.db') });
    // A small night on the farm: the well pit trips, the alarm is raised at the same instant and acknowledged;
    // the dairy loop's cable is cut and repaired; somebody takes the loft out of service.
    const sc = (loopId: string, from: 'unknown' | 'healthy' | 'tripped' | 'open', to: 'healthy' | 'tripped' | 'open', at: number) =>
      store.stateChanges.insert({ loopId, from, to, decoderUs: null, at, reason: `${from} to ${to}` });
    sc('well-pit', 'unknown', 'healthy', T0);
    sc('dairy', 'unknown', 'healthy', T0);
    sc('well-pit', 'healthy', 'tripped', T0 + 1_000);
    store.alarms.upsert(makeAlarm({ id: 1, loopId: 'well-pit', raisedAt: T0 + 1_000 }));
    store.audit.insert({ at: T0 + 1_000, actor: 'pairwatch', action: 'raise', alarmId: 1, loopId: 'well-pit', note: null });
    sc('dairy', 'healthy', 'open', T0 + 2_000);
    store.alarms.upsert(makeAlarm({ id: 2, loopId: 'dairy', condition: 'open', priority: 'trouble', raisedAt: T0 + 2_000 }));
    store.audit.insert({ at: T0 + 2_000, actor: 'pairwatch', action: 'raise', alarmId: 2, loopId: 'dairy', note: null });
    store.audit.insert({ at: T0 + 3_000, actor: 'ann', action: 'acknowledge', alarmId: 1, loopId: 'well-pit', note: 'going now' });
    sc('dairy', 'open', 'healthy', T0 + 4_000);
    store.audit.insert({ at: T0 + 5_000, actor: 'bob', action: 'out-of-service', alarmId: null, loopId: 'loft', note: 'rewiring' });
  });
  afterEach(() => {
    store.close();
    tmp.cleanup();
  });

  it('merges state changes and audit rows newest first, audit above its state change at the same instant', () => {
    const items = store.events.list({ limit: 50 }).items;
    expect(items.map((e) => e.id)).toEqual(['au-4', 'sc-5', 'au-3', 'au-2', 'sc-4', 'au-1', 'sc-3', 'sc-2', 'sc-1']);
    expect(items[0]).toMatchObject({ kind: 'audit', loopId: 'loft', priority: null, actor: 'bob', action: 'out-of-service' });
    expect(items[2]).toMatchObject({ kind: 'audit', loopId: 'well-pit', priority: 'alarm', alarmId: 1, summary: 'acknowledge tripped — going now' });
    expect(items[6]).toMatchObject({ kind: 'state-change', fromState: 'healthy', toState: 'tripped', priority: 'alarm', atMs: T0 + 1_000 });
  });

  it('pages with a cursor that stays stable while newer events arrive', () => {
    const whole = store.events.list({ limit: 50 }).items.map((e) => e.id);
    const first = store.events.list({ limit: 4 });
    store.stateChanges.insert({ loopId: 'well-pit', from: 'tripped', to: 'healthy', decoderUs: null, at: T0 + 9_000, reason: 'thawed' });
    const rest = allPages(store, { limit: 4 });
    expect(rest[0]?.id).toBe('sc-6'); // the newcomer is on a fresh first page…
    let cursor = first.nextCursor ?? undefined;
    const continued: string[] = [...first.items.map((e) => e.id)];
    while (cursor) {
      const page = store.events.list({ limit: 4, cursor });
      continued.push(...page.items.map((e) => e.id));
      cursor = page.nextCursor ?? undefined;
    }
    expect(continued).toEqual(whole); // …and does not shift the pages already being read
  });

  it('filters by loop, priority and time', () => {
    expect(allPages(store, { loopId: 'dairy', limit: 2 }).map((e) => e.id)).toEqual(['sc-5', 'au-2', 'sc-4', 'sc-2']);
    // Trouble: entering and leaving the open state, and the trouble's own audit rows.
    expect(allPages(store, { priority: 'trouble', limit: 10 }).map((e) => e.id)).toEqual(['sc-5', 'au-2', 'sc-4']);
    expect(allPages(store, { priority: 'alarm', limit: 10 }).map((e) => e.id)).toEqual(['au-3', 'au-1', 'sc-3']);
    expect(allPages(store, { sinceMs: T0 + 2_000, untilMs: T0 + 4_000, limit: 10 }).map((e) => e.id)).toEqual(['au-3', 'au-2', 'sc-4']);
  });

  it('refuses a cursor it did not hand out, naming the field', () => {
    for (const bad of ['bm90IGEgY3Vyc29y', '%%%', Buffer.from('2026-01-15T06:00:00.000Z|7|1').toString('base64url')]) {
      try {
        store.events.list({ limit: 5, cursor: bad });
        expect.fail('accepted a forged cursor');
      } catch (error) {
        expect(isStoreError(error) && error.code).toBe('PW_STORE_BAD_CURSOR');
        expect((error as Error).message).toMatch(/^cursor:/);
      }
    }
  });
});
