import { afterEach, describe, expect, it } from 'vitest';
import { createCoreRig, T0 } from './fixtures/coreRig.js';

/**
 * An action the alarm engine accepts can still be rolled back inside its transaction: the web's
 * acknowledge link is spent in the same commit, and a link found spent there throws. Memory must then
 * go back to what the disk holds, and the caller must be told, so the board, the API and the database
 * never disagree about whether someone acknowledged.
 */
const rig = createCoreRig('pw-core-rollback-');
afterEach(() => rig.cleanup());

describe('an action whose commit is rolled back has not happened', () => {
  it('a spent acknowledge link: the alarm stays unacknowledged in memory and on disk, and the caller hears why', () => {
    const site = rig.start();
    site.core.raiseSystem('mail-failing', T0);
    const [alarm] = site.core.openAlarms();
    const spent = Object.assign(new Error('this acknowledge link has been used already'), { code: 'PW_ACK_LINK_USED' });
    const result = site.core.alarmAction({ kind: 'ack', alarmId: alarm!.id, actor: 'ann', note: null }, T0 + 1000, () => {
      throw spent;
    });
    expect(result.error).toEqual({ code: 'PW_ACK_LINK_USED', message: 'this acknowledge link has been used already' });
    expect(site.core.openAlarms().map((a) => ({ id: a.id, ackedBy: a.ackedBy }))).toEqual([{ id: alarm!.id, ackedBy: null }]);
    expect(site.read('SELECT acked_by FROM alarms WHERE id = ?', alarm!.id)).toEqual([{ acked_by: null }]);
    expect(site.read("SELECT count(*) AS n FROM audit WHERE actor = 'ann'")).toEqual([{ n: 0 }]);
    // And the next, good acknowledgement works as if the refused one had never been tried.
    const again = site.core.alarmAction({ kind: 'ack', alarmId: alarm!.id, actor: 'bob', note: null }, T0 + 2000);
    expect(again.error).toBeUndefined();
    expect(site.read('SELECT acked_by FROM alarms WHERE id = ?', alarm!.id)).toEqual([{ acked_by: 'bob' }]);
  });

  it('any other throw in the transaction is reported as not recorded, not as done', () => {
    const site = rig.start();
    site.core.raiseSystem('mail-failing', T0);
    const [alarm] = site.core.openAlarms();
    const result = site.core.alarmAction({ kind: 'ack', alarmId: alarm!.id, actor: 'ann', note: null }, T0 + 1000, () => {
      throw new Error('something else broke');
    });
    expect(result.error?.code).toBe('PW_ACTION_NOT_RECORDED');
    expect(site.core.openAlarms()[0]!.ackedBy).toBeNull();
    expect(site.rejected).toEqual(['alarm ack: Error: something else broke']);
  });

  it('a mail reply whose own rows fail rolls back every acknowledgement it carried', () => {
    const site = rig.start();
    site.core.raiseSystem('mail-failing', T0);
    site.core.raiseSystem('inbox-failing', T0 + 10);
    const ids = site.core.openAlarms().map((a) => a.id);
    const results = site.core.alarmActionsWith(
      ids.map((alarmId) => ({ kind: 'ack' as const, alarmId, actor: 'ann', note: null })),
      T0 + 1000,
      'mail reply acknowledge',
      () => {
        throw new Error('the inbox offset could not be written');
      },
    );
    expect(results.map((r) => r.error?.code)).toEqual(['PW_ACTION_NOT_RECORDED', 'PW_ACTION_NOT_RECORDED']);
    expect(site.core.openAlarms().map((a) => a.ackedBy)).toEqual([null, null]);
    expect(site.read('SELECT acked_by FROM alarms ORDER BY id')).toEqual([{ acked_by: null }, { acked_by: null }]);
  });
});
