import mqtt from 'mqtt';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { siteTopics } from '../../src/mqtt/siteTopics.js';
import { insertApiToken } from '../../src/store/accountRepos.js';
import { newApiToken, sha256Hex } from '../../src/web/auth/secretToken.js';
import { sitePassword, startMosquitto, type MosquittoBroker } from '../helpers/mosquittoBroker.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';
import { siteEnv, writeSimSite } from './fixtures/simSite.js';
import { recordTopics, schemaValidator } from './fixtures/topicRecorder.js';

/**
 * Two simulated sites publish to a real Mosquitto (password file, ACL, loopback port) and a
 * subscriber with the estate's login checks what arrives against the published JSON Schemas.
 */
const PREFIX = 'pairwatch';
let tmp: TempDir;
let broker: MosquittoBroker;
const monitors: Monitor[] = [];
const validate = schemaValidator();

async function startSite(siteId: string, options: Parameters<typeof writeSimSite>[3] = {}): Promise<Monitor> {
  const { configFile, dir } = writeSimSite(tmp.dir, siteId, broker.url, options);
  const monitor = await startMonitor({ config: loadConfig(configFile), configDir: dir, logger: pino({ level: 'silent' }), listen: false, announce: false, env: siteEnv(siteId), version: '0.1.0-test' });
  monitors.push(monitor);
  return monitor;
}

const bodiesOn = (messages: ReadonlyArray<{ topic: string; body: unknown }>, topic: string) => messages.filter((m) => m.topic === topic).map((m) => m.body as Record<string, unknown>);

beforeAll(async () => {
  tmp = makeTempDir('pw-mqtt-');
  broker = await startMosquitto(tmp.dir, ['farm-a', 'farm-b', 'farm-c']);
}, 20_000);

afterAll(async () => {
  for (const m of monitors) await m.stop('test over', 2000);
  await broker?.close();
  tmp?.cleanup();
});

describe('site publishing to a real MQTT 5 broker', () => {
  it('states, summary, decoder link, alarm events and the active list arrive and match the schemas', async () => {
    const rec = await recordTopics(broker.url, `${PREFIX}/#`);
    try {
      const a = await startSite('farm-a', { freezeAt: '1500ms' });
      await startSite('farm-b');
      const ta = siteTopics(PREFIX, 'farm-a');
      const tb = siteTopics(PREFIX, 'farm-b');
      // The frozen node trips; its alarm is raised and travels as an event.
      await waitFor(() => bodiesOn(rec.messages, ta.events).some((e) => e.kind === 'raised'), 15_000, () => 'the raised event from farm-a');
      const raised = bodiesOn(rec.messages, ta.events).find((e) => e.kind === 'raised')!;
      const alarmId = (raised.alarm as { id: number }).id;
      expect(raised.alarm).toMatchObject({ loopId: 'north-shed', condition: 'tripped', priority: 'alarm' });
      expect(a.commands.acknowledge(alarmId, 'tester', 'seen').ok).toBe(true);
      await waitFor(() => bodiesOn(rec.messages, ta.events).some((e) => e.kind === 'acknowledged'), 5000, () => 'the acknowledged event');
      await waitFor(() => bodiesOn(rec.messages, ta.alarms).some((l) => (l.alarms as Array<{ state: string }>).some((x) => x.state === 'acknowledged')), 5000, () => 'the active list with the acknowledged alarm');
      await waitFor(() => bodiesOn(rec.messages, tb.loop('south-shed')).some((l) => l.state === 'healthy'), 10_000, () => 'farm-b south shed healthy');
      await waitFor(() => bodiesOn(rec.messages, ta.summary).some((s) => s.worst === 'alarm'), 5000, () => 'farm-a summary saying alarm');

      for (const topic of [ta.status, ta.summary, ta.loop('north-shed'), ta.decoder('main'), ta.alarms, ta.events, tb.status, tb.heartbeat]) {
        expect(rec.messages.some((m) => m.topic === topic), topic).toBe(true);
      }
      const problems = rec.messages.map((m) => validate(PREFIX, m.topic, m.body)).filter((p) => p !== null);
      expect(problems).toEqual([]);
      expect(bodiesOn(rec.messages, ta.status).at(-1)).toMatchObject({ online: true, version: '0.1.0-test' });
      expect(bodiesOn(rec.messages, ta.summary).at(-1)).toMatchObject({ siteName: 'Site farm-a', url: 'https://farm-a.example.org/', counts: { alarm: 1 } });
      // Event numbers per site: 1, 2, … without a gap.
      const numbers = bodiesOn(rec.messages, ta.events).map((e) => e.eventNo);
      expect(numbers).toEqual(numbers.map((_, i) => i + 1));
      const ev = rec.messages.find((m) => m.topic === ta.events)!;
      expect(ev.retain).toBe(false);
      expect(ev.packet.qos).toBe(1);
      expect(ev.packet.properties?.messageExpiryInterval).toBe(86_400); // event_expiry default 24 h
    } finally {
      await rec.close();
    }
  }, 40_000);

  it('retained state is there for a subscriber that comes later (what the estate restarts from)', async () => {
    const late = await recordTopics(broker.url, `${PREFIX}/farm-a/#`);
    try {
      const t = siteTopics(PREFIX, 'farm-a');
      await waitFor(() => [t.status, t.summary, t.alarms, t.loop('north-shed'), t.loop('south-shed'), t.decoder('main')].every((topic) => late.messages.some((m) => m.topic === topic && m.retain)), 5000, () => 'retained farm-a topics');
      expect(late.messages.some((m) => m.topic === t.events)).toBe(false); // events are never retained
    } finally {
      await late.close();
    }
  });

  it('the ACL stops farm-a from publishing as farm-b', async () => {
    const rec = await recordTopics(broker.url, `${PREFIX}/farm-b/forged`);
    const ownRec = await recordTopics(broker.url, `${PREFIX}/farm-a/forged`);
    const intruder = await mqtt.connectAsync(broker.url, { protocolVersion: 5, clientId: 'farm-a-intruder', username: 'farm-a', password: sitePassword('farm-a') });
    try {
      const denied = await intruder.publishAsync(`${PREFIX}/farm-b/forged`, '{"online":false}', { qos: 1 }).then(
        () => null,
        (err: { code?: number }) => err.code,
      );
      await intruder.publishAsync(`${PREFIX}/farm-a/forged`, 'own', { qos: 1 });
      // The site's own topic arrives; the forged one is answered "Not authorized" (reason code 0x87, OASIS MQTT 5.0 §3.4.2.1).
      await waitFor(() => ownRec.messages.length > 0, 5000, () => 'the publish on its own topic');
      expect(denied).toBe(0x87);
      expect(rec.messages).toEqual([]);
    } finally {
      await intruder.endAsync(true);
      await rec.close();
      await ownRec.close();
    }
  });

  it('commands: a viewer token is refused, an operator token acknowledges; answers go to the response topic with the correlation data', async () => {
    const c = await startSite('farm-c', { freezeAt: '1s', acceptCommands: true });
    const viewer = newApiToken();
    const operator = newApiToken();
    insertApiToken(c.store.db, { name: 'board-viewer', role: 'viewer', tokenHash: sha256Hex(viewer), createdAt: Date.now() });
    insertApiToken(c.store.db, { name: 'board-operator', role: 'operator', tokenHash: sha256Hex(operator), createdAt: Date.now() });
    await waitFor(() => c.read.alarms('active').some((a) => a.condition === 'tripped'), 15_000, () => 'farm-c to trip');
    await waitFor(() => c.mqtt?.isConnected() === true, 5000, () => 'farm-c connected');
    const alarmId = c.read.alarms('active').find((a) => a.condition === 'tripped')!.id;
    const t = siteTopics(PREFIX, 'farm-c');
    const replyTopic = `${t.replies}/tester`;
    const rec = await recordTopics(broker.url, replyTopic);
    const asker = await mqtt.connectAsync(broker.url, { protocolVersion: 5, clientId: 'asker', username: 'estate', password: 'estate-pass' });
    try {
      const send = (token: string, correlation: string, inProperty: boolean) =>
        asker.publishAsync(t.commands, JSON.stringify({ action: 'acknowledge', alarmId, note: 'from the estate', ...(inProperty ? {} : { token }) }), {
          qos: 1,
          properties: { responseTopic: replyTopic, correlationData: Buffer.from(correlation), ...(inProperty && { userProperties: { token } }) },
        });
      await send(viewer, 'ask-1', true);
      await waitFor(() => rec.messages.length >= 1, 5000, () => 'the answer to the viewer');
      expect(rec.messages[0]!.body).toMatchObject({ ok: false, code: 'PW_WEB_FORBIDDEN', alarmId });
      expect(rec.messages[0]!.packet.properties?.correlationData?.toString()).toBe('ask-1');
      expect(c.read.alarm(alarmId)!.state).toBe('unacknowledged');

      await send(operator, 'ask-2', false);
      await waitFor(() => rec.messages.length >= 2, 5000, () => 'the answer to the operator');
      expect(rec.messages[1]!.body).toMatchObject({ ok: true, action: 'acknowledge', alarmId });
      expect(rec.messages[1]!.packet.properties?.correlationData?.toString()).toBe('ask-2');
      const alarm = c.read.alarm(alarmId)!;
      expect(alarm.state).toBe('acknowledged');
      expect(alarm.ackedBy).toBe('token:board-operator');
      for (const m of rec.messages) expect(validate(PREFIX, m.topic, m.body)).toBeNull();
    } finally {
      await asker.endAsync(true);
      await rec.close();
    }
  }, 30_000);
});
