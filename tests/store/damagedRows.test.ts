import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStore, type Store } from '../../src/store/openStore.js';
import { isStoreError } from '../../src/store/storeError.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0, makeAlarm } from './storeTestKit.js';

/**
 * A row damaged on disk (a hand edit, a bad restore) is refused with PW_STORE_BAD_ROW and a message
 * that names the table, the row id (or loop id) and the column, so the user can find and fix that
 * one row. Each column is damaged in turn through a raw UPDATE (check constraints off for the ones
 * that have them) and read back through the repository a page would use.
 */
let tmp: ReturnType<typeof makeTempDir>;
let store: Store;
beforeEach(() => {
  tmp = makeTempDir('pw-damaged-');
  store = openStore({ path: join(tmp.dir, 'site.db') });
  store.db.pragma('ignore_check_constraints = ON');
  store.alarms.upsert(makeAlarm({ id: 7, clearedAt: T0 + 1, ackedAt: T0 + 2, shelvedUntil: T0 + 3, closedAt: T0 + 4 }));
  store.audit.insert({ at: T0, actor: 'ann', action: 'acknowledge', alarmId: 7, loopId: 'well-pit', note: null });
  store.stateChanges.insert({ loopId: 'well-pit', from: 'healthy', to: 'tripped', decoderUs: 1, at: T0, reason: 'r' });
  store.loopStatus.ensureLoops(['well-pit'], T0);
  store.loopStatus.setLastPulse('well-pit', T0);
  store.loopStatus.setService('well-pit', false, 'n', 'ann', T0);
});
afterEach(() => {
  store.close();
  tmp.cleanup();
});

function refusal(read: () => unknown): string {
  try {
    read();
  } catch (error) {
    expect(isStoreError(error) && error.code).toBe('PW_STORE_BAD_ROW');
    return (error as Error).message;
  }
  throw new Error('the damaged row was accepted');
}

describe('a damaged row names itself', () => {
  it('alarms: each enumerated, time and JSON column', () => {
    const cases: Array<[string, string]> = [
      ['condition', 'smoke'],
      ['priority', 'urgent'],
      ['state', 'snoozed'],
      ['raised_at', 'yesterday'],
      ['cleared_at', 'later'],
      ['acked_at', 'soon'],
      ['shelved_until', 'never'],
      ['closed_at', 'whenever'],
      ['escalation_json', '{not json'],
    ];
    for (const [column, bad] of cases) {
      const good = store.db.prepare(`SELECT ${column} FROM alarms WHERE id = 7`).pluck().get();
      store.db.prepare(`UPDATE alarms SET ${column} = ? WHERE id = 7`).run(bad);
      expect(refusal(() => store.alarms.get(7)), column).toMatch(new RegExp(`^alarms\\[7\\]\\.${column}: `));
      store.db.prepare(`UPDATE alarms SET ${column} = ? WHERE id = 7`).run(good);
    }
    expect(refusal(() => {
      store.db.prepare("UPDATE alarms SET escalation_json = '{not json' WHERE id = 7").run();
      store.alarms.get(7);
    })).toBe('alarms[7].escalation_json: not JSON');
  });

  it('alarms: a contact list holding something other than names keeps only the names', () => {
    store.db.prepare(`UPDATE alarms SET escalation_json = ? WHERE id = 7`).run(JSON.stringify({ stepsDone: 1, notified: ['office', 5, null, 'oncall'] }));
    expect(store.alarms.get(7)?.escalation).toEqual({ stepsDone: 1, repeatsDone: 0, nextAt: null, notified: ['office', 'oncall'] });
  });

  it('audit, state changes and loop status, through their lists and the timeline', () => {
    const auditId = store.db.prepare('SELECT id FROM audit').pluck().get() as number;
    const changeId = store.db.prepare('SELECT id FROM state_changes').pluck().get() as number;
    const damage = (sql: string, read: () => unknown) => {
      store.db.exec('SAVEPOINT damage');
      try {
        store.db.exec(sql);
        return refusal(read);
      } finally {
        store.db.exec('ROLLBACK TO damage');
        store.db.exec('RELEASE damage');
      }
    };
    const timeline = () => store.events.list({ limit: 10 });
    expect(damage("UPDATE audit SET action = 'sneeze'", () => store.audit.forAlarm(7))).toMatch(new RegExp(`^audit\\[${auditId}\\]\\.action: `));
    expect(damage("UPDATE audit SET at = 'noon'", () => store.audit.list({ limit: 5 }))).toMatch(new RegExp(`^audit\\[${auditId}\\]\\.at: `));
    expect(damage("UPDATE audit SET action = 'sneeze'", timeline)).toMatch(new RegExp(`^audit\\[${auditId}\\]\\.action: `));
    expect(damage("UPDATE audit SET at = 'noon'", timeline)).toMatch(/\.at: /);
    expect(damage("UPDATE alarms SET priority = 'urgent'", timeline)).toMatch(new RegExp(`^audit\\[${auditId}\\]\\.priority: `));
    expect(damage("UPDATE alarms SET condition = 'smoke'", timeline)).toMatch(new RegExp(`^audit\\[${auditId}\\]\\.condition: `));
    expect(damage("UPDATE state_changes SET from_state = 'asleep'", () => store.stateChanges.list({ limit: 5 }))).toMatch(new RegExp(`^state_changes\\[${changeId}\\]\\.from_state: `));
    expect(damage("UPDATE state_changes SET to_state = 'asleep'", () => store.stateChanges.list({ limit: 5 }))).toMatch(new RegExp(`^state_changes\\[${changeId}\\]\\.to_state: `));
    expect(damage("UPDATE state_changes SET at = 'noon'", () => store.stateChanges.list({ limit: 5 }))).toMatch(new RegExp(`^state_changes\\[${changeId}\\]\\.at: `));
    expect(damage("UPDATE state_changes SET from_state = 'asleep'", timeline)).toMatch(new RegExp(`^state_changes\\[${changeId}\\]\\.from_state: `));
    expect(damage("UPDATE state_changes SET to_state = 'asleep'", timeline)).toMatch(new RegExp(`^state_changes\\[${changeId}\\]\\.to_state: `));
    expect(damage("UPDATE state_changes SET at = '2026-99-99'", timeline)).toMatch(new RegExp(`^state_changes\\[${changeId}\\]\\.at: `));
    for (const column of ['state', 'since_at', 'last_pulse_at', 'service_at']) {
      expect(damage(`UPDATE loop_status SET ${column} = 'x'`, () => store.loopStatus.get('well-pit')), column).toMatch(new RegExp(`^loop_status\\[well-pit\\]\\.${column}: `));
    }
  });
});
