import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { lastAlarmEventNo, pendingAlarmEventCount } from '../../src/mqtt/mqttOutbox.js';
import { siteTopics } from '../../src/mqtt/siteTopics.js';
import { startMosquitto, type MosquittoBroker } from '../helpers/mosquittoBroker.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';
import { siteEnv, writeSimSite } from './fixtures/simSite.js';
import { recordTopics, schemaValidator } from './fixtures/topicRecorder.js';

/**
 * Nothing lost: the broker goes away while alarms are raised and acknowledged. The issue asks for a
 * 2-minute outage; here it is scaled to a few seconds (unreachable_after 1 s, so the trouble is raised
 * well inside it) — what matters is that events pile up in the outbox across the gap.
 */
let tmp: TempDir;
let broker: MosquittoBroker;
let site: Monitor;

beforeAll(async () => {
  tmp = makeTempDir('pw-mqtt-outage-');
  broker = await startMosquitto(tmp.dir, ['farm-d'], { persistent: true });
  const { configFile, dir } = writeSimSite(tmp.dir, 'farm-d', broker.url, { unreachableAfter: '1s' });
  site = await startMonitor({ config: loadConfig(configFile), configDir: dir, logger: pino({ level: 'silent' }), listen: false, announce: false, env: siteEnv('farm-d') });
}, 20_000);

afterAll(async () => {
  await site?.stop('test over', 2000);
  await broker?.close();
  tmp?.cleanup();
});

describe('a broker outage while alarms happen', () => {
  it('holds the events in the outbox, raises "broker unreachable", then delivers every event in order with no gap', async () => {
    const topics = siteTopics('pairwatch', 'farm-d');
    // A persistent session, so whatever the site sends after the restart waits for this subscriber.
    const rec = await recordTopics(broker.url, topics.events, 'outage-recorder', { persistentSession: true });
    const validate = schemaValidator();
    try {
      await waitFor(() => site.mqtt?.isConnected() === true, 10_000, () => 'the site to connect');
      const raise = (source: string) => site.core.alarmAction({ kind: 'raise', source, loopId: null, condition: 'decoder-fault', latched: false, policy: null }, Date.now());
      raise('main');
      await waitFor(() => rec.messages.length >= 1, 5000, () => 'the first event');

      await broker.stop();
      await waitFor(() => site.mqtt?.isConnected() === false, 10_000, () => 'the site to notice the broker is gone');
      for (const source of ['spare-1', 'spare-2', 'spare-3']) raise(source);
      for (const alarm of site.read.alarms('active').filter((a) => a.condition === 'decoder-fault')) site.commands.acknowledge(alarm.id, 'tester', null);
      await waitFor(() => site.read.alarms('active').some((a) => a.condition === 'broker-unreachable'), 10_000, () => '"broker unreachable" to be raised');
      // Hold the outage a while longer (the scaled "2 minutes"), with one more alarm inside it.
      await new Promise((r) => setTimeout(r, 4000));
      raise('spare-4');
      expect(pendingAlarmEventCount(site.store.db)).toBeGreaterThanOrEqual(8); // 4 raised + 4 acknowledged + the trouble itself

      await broker.start();
      await waitFor(() => site.read.alarms('active').every((a) => a.condition !== 'broker-unreachable' || !a.active), 15_000, () => '"broker unreachable" to clear');
      await waitFor(() => pendingAlarmEventCount(site.store.db) === 0, 15_000, () => 'the outbox to drain');
      const last = lastAlarmEventNo(site.store.db)!;
      await waitFor(() => rec.messages.some((m) => (m.body as { eventNo: number }).eventNo === last), 15_000, () => `event ${last} at the subscriber`);

      // At-least-once: a repeat is possible after a lost PUBACK; a consumer drops numbers it has seen.
      const seen: number[] = [];
      for (const m of rec.messages) {
        const n = (m.body as { eventNo: number }).eventNo;
        if (!seen.includes(n)) seen.push(n);
      }
      expect(seen).toEqual(Array.from({ length: last }, (_, i) => i + 1));
      const kinds = rec.messages.map((m) => m.body as { kind: string; alarm: { condition: string } });
      expect(kinds.some((k) => k.kind === 'raised' && k.alarm.condition === 'broker-unreachable')).toBe(true);
      expect(kinds.some((k) => k.kind === 'cleared' && k.alarm.condition === 'broker-unreachable')).toBe(true);
      expect(rec.messages.map((m) => validate('pairwatch', m.topic, m.body)).filter(Boolean)).toEqual([]);
    } finally {
      await rec.close();
    }
  }, 60_000);
});
