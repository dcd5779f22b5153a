import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { encodeCursor, MAX_TIMELINE_PAGE } from '../../src/store/history.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { isStoreError } from '../../src/store/storeError.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0, makeAlarm } from './storeTestKit.js';

/**
 * The history timeline's page rules: exactly `limit` items a page (at most MAX_TIMELINE_PAGE), a next
 * cursor only when more follow, newest first with the higher id first within one instant, cursors
 * past row 9 (ids of several digits), audit summaries that name the alarm's condition and the note,
 * and cursors refused unless they are exactly what a page handed out.
 */
let tmp: ReturnType<typeof makeTempDir>;
let store: Store;
beforeEach(() => {
  tmp = makeTempDir('pw-timeline-');
  store = openStore({ path: join(tmp.dir, 'site.db') });
});
afterEach(() => {
  store.close();
  tmp.cleanup();
});

const change = (i: number, at = T0 + i * 1000) =>
  store.stateChanges.insert({ loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: null, at, reason: `change ${i}` });

describe('timeline pages', () => {
  it('gives exactly `limit` items and a cursor only while more follow', () => {
    for (let i = 1; i <= 9; i++) change(i);
    const whole = store.events.list({ limit: 9 });
    expect(whole.items).toHaveLength(9);
    expect(whole.nextCursor).toBeNull();
    const first = store.events.list({ limit: 4 });
    expect(first.items.map((e) => e.id)).toEqual(['sc-9', 'sc-8', 'sc-7', 'sc-6']);
    expect(first.nextCursor).not.toBeNull();
    const second = store.events.list({ limit: 5, cursor: first.nextCursor! });
    expect(second.items.map((e) => e.id)).toEqual(['sc-5', 'sc-4', 'sc-3', 'sc-2', 'sc-1']);
    expect(second.nextCursor).toBeNull();
  });

  it('pages on past rows with ids of several digits', () => {
    for (let i = 1; i <= 25; i++) change(i);
    const ids: string[] = [];
    let cursor: string | undefined;
    do {
      const page = store.events.list({ limit: 10, ...(cursor !== undefined && { cursor }) });
      ids.push(...page.items.map((e) => e.id));
      cursor = page.nextCursor ?? undefined;
    } while (cursor);
    expect(ids).toEqual(Array.from({ length: 25 }, (_, k) => `sc-${25 - k}`));
  });

  it(`holds at most ${MAX_TIMELINE_PAGE} items a page, and at least one`, () => {
    store.transaction(() => {
      for (let i = 1; i <= MAX_TIMELINE_PAGE + 20; i++) change(i);
    });
    expect(store.events.list({ limit: 100_000 }).items).toHaveLength(MAX_TIMELINE_PAGE);
    expect(store.events.list({ limit: 0 }).items).toHaveLength(1);
    expect(store.events.list({ limit: 2.9 }).items).toHaveLength(2);
  });

  it('within one instant the later row comes first; audit rows name the condition and the note', () => {
    store.alarms.upsert(makeAlarm({ id: 1, loopId: 'well-pit', condition: 'tripped', raisedAt: T0 }));
    store.audit.insert({ at: T0, actor: 'pairwatch', action: 'raise', alarmId: 1, loopId: 'well-pit', note: null });
    store.audit.insert({ at: T0, actor: 'ann', action: 'acknowledge', alarmId: 1, loopId: 'well-pit', note: 'going now' });
    store.audit.insert({ at: T0, actor: 'bob', action: 'out-of-service', alarmId: null, loopId: 'loft', note: null });
    change(0, T0);
    change(1, T0);
    const items = store.events.list({ limit: 10 }).items;
    expect(items.map((e) => [e.id, e.summary, e.condition])).toEqual([
      ['au-3', 'out-of-service', null],
      ['au-2', 'acknowledge tripped — going now', 'tripped'],
      ['au-1', 'raise tripped', 'tripped'],
      ['sc-2', 'healthy → tripped: change 1', null],
      ['sc-1', 'healthy → tripped: change 0', null],
    ]);
  });

  it('refuses a cursor with anything before or after what a page hands out', () => {
    change(1);
    const good = Buffer.from(encodeCursor({ at: new Date(T0 + 5_000).toISOString(), rank: 0, id: 12 }), 'base64url').toString('utf8');
    expect(store.events.list({ limit: 5, cursor: Buffer.from(good).toString('base64url') }).items).toHaveLength(1);
    for (const text of [`x${good}`, `${good}x`, `${good}\n`]) {
      let code: string | null = null;
      try {
        store.events.list({ limit: 5, cursor: Buffer.from(text).toString('base64url') });
      } catch (error) {
        code = isStoreError(error) ? error.code : String(error);
      }
      expect(code, JSON.stringify(text)).toBe('PW_STORE_BAD_CURSOR');
    }
  });
});
