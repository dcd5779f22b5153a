import type { AlarmRecord } from '../../src/alarms/alarmTypes.js';
import type { NoticeAlarm } from '../../src/alarms/noticeTypes.js';

/**
 * The one hand-written sample alarm the alarm, store and notify tests start from: well pit tripped,
 * raised and not yet acknowledged, under the default policy, not yet escalated. Written out here
 * rather than taken from the engine, so no test compares the engine with its own output.
 */
export function sampleAlarm(raisedAt: number, overrides: Partial<AlarmRecord> = {}): AlarmRecord {
  return {
    id: 1,
    source: 'well-pit',
    loopId: 'well-pit',
    condition: 'tripped',
    priority: 'alarm',
    state: 'unacknowledged',
    active: true,
    latched: false,
    policy: 'default',
    raisedAt,
    clearedAt: null,
    ackedAt: null,
    ackedBy: null,
    note: null,
    shelvedUntil: null,
    shelveReason: null,
    closedAt: null,
    escalation: { stepsDone: 0, repeatsDone: 0, nextAt: null, notified: [] },
    ...overrides,
  };
}

/** The same sample as a notice mail sees it: no escalation bookkeeping, and no mail thread yet. */
export function sampleNoticeAlarm(raisedAt: number, overrides: Partial<NoticeAlarm> = {}): NoticeAlarm {
  const { latched: _latched, policy: _policy, closedAt: _closedAt, escalation: _escalation, ...shown } = sampleAlarm(raisedAt);
  return { ...shown, threadMessageId: null, ...overrides };
}
