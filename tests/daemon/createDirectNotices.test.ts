import { describe, expect, it } from 'vitest';
import { createDirectNotices } from '../../src/daemon/createDirectNotices.js';
import type { OutboxMessage } from '../../src/model/outboxMessage.js';
import type { NotifyEffect } from '../../src/notify/noticeQueue.js';
import { sampleAlarm } from '../helpers/sampleAlarm.js';
import { settings } from '../notify/helpers/fixtures.js';

const T0 = Date.UTC(2026, 2, 1, 5, 0, 0);
const notify = (alarmId: number, contactIds: string[]): NotifyEffect => ({ kind: 'notify', alarmId, contactIds, notice: 'raised', actor: null, note: null });

function rig(failFirst = 0) {
  const sent: OutboxMessage[] = [];
  let failures = failFirst;
  const direct = createDirectNotices({
    settings: settings(),
    groupWindowMs: 1000,
    retryFirstMs: 15_000,
    retryMaxMs: 60_000,
    transport: {
      async send(message) {
        if (failures > 0) {
          failures -= 1;
          throw new Error('421 try later');
        }
        sent.push(message);
        return { accepted: message.to, response: '250 ok' };
      },
    },
  });
  return { direct, sent };
}

describe('createDirectNotices: alarm mail from memory while storage fails', () => {
  it('claims an effect once, and only the claimed effect object', () => {
    const { direct } = rig();
    const effect = notify(1, ['office']);
    direct.claim(effect, sampleAlarm(T0, { loopId: 'well' }), T0);
    direct.claim(effect, sampleAlarm(T0, { loopId: 'well' }), T0);
    expect(direct.isClaimed(effect)).toBe(true);
    expect(direct.isClaimed(notify(1, ['office']))).toBe(false);
    expect(direct.pending()).toBe(1);
  });

  it('keeps the grouping window: one mail per contact once the window closes, listing both alarms', async () => {
    const { direct, sent } = rig();
    direct.claim(notify(1, ['office']), sampleAlarm(T0, { id: 1, loopId: 'well' }), T0);
    direct.claim(notify(2, ['office']), sampleAlarm(T0 + 500, { id: 2, loopId: 'lambing', source: 'lambing' }), T0 + 500);
    expect(await direct.round(T0 + 999)).toEqual([]);
    const out = await direct.round(T0 + 1000);
    expect(out).toHaveLength(1);
    expect(out[0]!.alarmIds).toEqual([1, 2]);
    expect(sent).toHaveLength(1);
    expect(sent[0]!.to).toHaveLength(1);
    expect(sent[0]!.to[0]).toContain('<office@ridgeway.example>');
    expect(direct.pending()).toBe(0);
  });

  it('a failed send keeps the notices and waits the first retry delay before trying again', async () => {
    const { direct, sent } = rig(1);
    direct.claim(notify(1, ['office']), sampleAlarm(T0, { loopId: 'well' }), T0);
    expect(await direct.round(T0 + 1000)).toEqual([]);
    expect(direct.pending()).toBe(1);
    expect(await direct.round(T0 + 1000 + 14_999)).toEqual([]);
    expect(await direct.round(T0 + 1000 + 15_000)).toHaveLength(1);
    expect(sent).toHaveLength(1);
  });

  it('on a stop (flushAll) sends what is still inside its window', async () => {
    const { direct } = rig();
    direct.claim(notify(1, ['office']), sampleAlarm(T0, { loopId: 'well' }), T0);
    expect(await direct.round(T0, true)).toHaveLength(1);
  });

  it('hands unsent notices back due at once, and forgets them', () => {
    const { direct } = rig();
    direct.claim(notify(1, ['office', 'oncall']), sampleAlarm(T0, { loopId: 'well' }), T0);
    const back = direct.handBack(T0 + 200);
    expect(back.map((n) => [n.contactId, n.alarmId, n.dueAt])).toEqual([
      ['office', 1, T0 + 200],
      ['oncall', 1, T0 + 200],
    ]);
    expect(direct.pending()).toBe(0);
  });
});
