import { join } from 'node:path';
import pino from 'pino';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import type { AlarmEffect } from '../../src/alarms/alarmTypes.js';
import { parseConfig } from '../../src/config/loadConfig.js';
import { createMonitorCore } from '../../src/daemon/monitorCore.js';
import { initialEstateBook, stepEstate } from '../../src/estate/estateBook.js';
import { alarmEventsOf } from '../../src/mqtt/alarmEvents.js';
import { enqueueAlarmEvents, lastAlarmEventNo, markAlarmEventsSent, pendingAlarmEvents, pruneSentAlarmEvents } from '../../src/mqtt/mqttOutbox.js';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { sampleAlarm } from '../helpers/sampleAlarm.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';

const T0 = Date.UTC(2026, 0, 15, 2, 0, 0);

describe('alarm events from engine effects (pure)', () => {
  it('pairs each audit action with its alarm as committed, in order; mail and escalation stay local', () => {
    const raised = sampleAlarm(T0);
    const acked = sampleAlarm(T0, { state: 'acknowledged', ackedAt: T0 + 5000, ackedBy: 'ann', note: 'on it' });
    const effects: AlarmEffect[] = [
      { kind: 'alarm', alarm: raised },
      { kind: 'audit', entry: { at: T0, actor: 'system', action: 'raise', alarmId: 1, loopId: 'well-pit', note: null } },
      { kind: 'audit', entry: { at: T0, actor: 'system', action: 'escalation-step', alarmId: 1, loopId: 'well-pit', note: null } },
      { kind: 'alarm', alarm: acked },
      { kind: 'audit', entry: { at: T0 + 5000, actor: 'ann', action: 'acknowledge', alarmId: 1, loopId: 'well-pit', note: 'on it' } },
    ];
    const events = alarmEventsOf(effects);
    expect(events.map((e) => e.kind)).toEqual(['raised', 'acknowledged']);
    expect(events[1]).toMatchObject({ at: '2026-01-15T02:00:05.000Z', actor: 'ann', note: 'on it', alarm: { id: 1, state: 'acknowledged', ackedBy: 'ann' } });
  });
});

describe('the MQTT event outbox in a real SQLite file', () => {
  let tmp: TempDir;
  let store: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-mqtt-outbox-');
    store = openStore({ path: join(tmp.dir, 'site.db') });
  });
  afterEach(() => {
    store.close();
    tmp.cleanup();
  });

  it('numbers events 1, 2, 3 … and keeps counting after sent rows are pruned', () => {
    const draft = alarmEventsOf([{ kind: 'alarm', alarm: sampleAlarm(T0) }, { kind: 'audit', entry: { at: T0, actor: 'system', action: 'raise', alarmId: 1, loopId: 'well-pit', note: null } }]);
    expect(enqueueAlarmEvents(store.db, [...draft, ...draft], T0)).toEqual([1, 2]);
    markAlarmEventsSent(store.db, 2, T0);
    pruneSentAlarmEvents(store.db, T0 + 1);
    expect(pendingAlarmEvents(store.db, 10)).toEqual([]);
    expect(enqueueAlarmEvents(store.db, draft, T0)).toEqual([3]);
    expect(lastAlarmEventNo(store.db)).toBe(3);
    expect(pendingAlarmEvents(store.db, 10).map((e) => e.eventNo)).toEqual([3]);
  });

  it('commits the event row in the same transaction as the alarm: if the event cannot be written, neither is the alarm', () => {
    const config = parseConfig(`
site: { name: "Test Farm" }
decoders: [{ id: main, port: /dev/null, inputs: 1 }]
loops: [{ id: well-pit, name: "Well pit", decoder: main, input: 1 }]
storage: { path: ${join(tmp.dir, 'site.db')} }
mqtt: { url: "mqtt://127.0.0.1:1", site_id: test-farm }
`);
    const writer = createDurableWriter({ store, onFailing() {}, onRecovered() {}, onRejected() {}, now: () => T0 });
    const core = createMonitorCore({
      config, store, writer, logger: pino({ level: 'silent' }), now: T0,
      onAlarmEffects: (s, effects, t) => void enqueueAlarmEvents(s.db, alarmEventsOf(effects), t),
    });
    // The outbox refuses every row (as a full or broken table would).
    store.db.exec("CREATE TRIGGER refuse_event BEFORE INSERT ON mqtt_outbox BEGIN SELECT RAISE(ABORT, 'event table refuses'); END;");
    core.raiseSystem('broker-unreachable', T0);
    writer.flush();
    expect(store.db.prepare('SELECT count(*) FROM alarms').pluck().get()).toBe(0);
    expect(store.db.prepare('SELECT count(*) FROM mqtt_outbox').pluck().get()).toBe(0);

    store.db.exec('DROP TRIGGER refuse_event');
    core.raiseSystem('storage-failing', T0 + 1000);
    writer.flush();
    expect(store.db.prepare('SELECT count(*) FROM alarms').pluck().get()).toBe(1);
    expect(pendingAlarmEvents(store.db, 10).map((e) => [e.kind, e.alarm.condition])).toEqual([['raised', 'storage-failing']]);
  });
});

describe('the estate book', () => {
  const event = (eventNo: number) => ({ eventNo, kind: 'raised', at: '2026-01-15T02:00:00.000Z', actor: 'system', note: null, alarm: {} });
  it('drops repeated event numbers and reports a gap', () => {
    let book = initialEstateBook('pairwatch', ['ash']);
    const kinds: string[] = [];
    for (const n of [1, 2, 2, 5]) {
      const stepped = stepEstate(book, 'pairwatch/ash/events', event(n));
      book = stepped.book;
      kinds.push(...stepped.effects.map((e) => (e.kind === 'gap' ? `gap ${e.expected}-${e.got}` : `event ${e.event.eventNo}`)));
    }
    expect(kinds).toEqual(['event 1', 'event 2', 'gap 3-5', 'event 5']);
    expect(stepEstate(book, 'pairwatch/elsewhere/events', event(1)).effects).toEqual([]);
  });
});
