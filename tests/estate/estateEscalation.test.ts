import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import mqtt, { type MqttClient } from 'mqtt';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadEstateConfig } from '../../src/estate/loadEstateConfig.js';
import { startEstate, type Estate } from '../../src/estate/startEstate.js';
import type { AlarmPayload } from '../../src/mqtt/sitePayloads.js';
import { siteTopics } from '../../src/mqtt/siteTopics.js';
import { ESTATE_USER, sitePassword, startMosquitto, type MosquittoBroker } from '../helpers/mosquittoBroker.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';

/**
 * The estate's escalation end to end: a site (an MQTT client logged in as that site, publishing the
 * retained topics as a site does) lists an unacknowledged alarm on a real Mosquitto; the estate mails
 * a real SMTP server on loopback, repeats, escalates, and stops when the site lists the alarm as
 * acknowledged. The estate runs on a fake clock; the test waits on mail and on the estate's beats.
 */
const MIN = 60_000;
let clock = Date.parse('2026-03-01T08:00:00Z');
const T0 = clock;
let tmp: TempDir;
let broker: MosquittoBroker;
let smtp: SmtpSink;
let site: MqttClient;
let estate: Estate;

const iso = (ms: number) => new Date(ms).toISOString();
const alarm = (overrides: Partial<AlarmPayload> = {}): AlarmPayload => ({
  id: 3, loopId: 'north-shed', source: 'north-shed', condition: 'tripped', priority: 'alarm', state: 'unacknowledged', active: true,
  raisedAt: iso(T0), clearedAt: null, ackedAt: null, ackedBy: null, note: null, shelvedUntil: null, shelveReason: null, ...overrides,
});

async function publishSite(alarms: AlarmPayload[], at = clock): Promise<void> {
  const t = siteTopics('pairwatch', 'ash-farm');
  await site.publishAsync(t.status, JSON.stringify({ online: true, at: iso(at), version: 'test', startedAt: iso(T0), reason: null }), { qos: 1, retain: true });
  await site.publishAsync(t.loop('north-shed'), JSON.stringify({ id: 'north-shed', name: 'North shed', location: null, state: alarms.length ? 'tripped' : 'healthy', since: iso(T0), lastPulseAt: null, inService: true, intermittent: false, periodMs: 500, alarm: null, lineQuality: { since: iso(T0), pulses: 0, intervalMeanMs: null, intervalJitterMs: null, outOfTolerance: 0, glitches: 0, longPulses: 0, lostFrames: 0 } }), { qos: 1, retain: true });
  await site.publishAsync(t.alarms, JSON.stringify({ at: iso(at), lastEventNo: null, alarms }), { qos: 1, retain: true });
}

/** Resolves after the estate has looked at its sites `beats` more times (each look reads the fake clock once). */
function beats(e: Estate, count = 3): Promise<void> {
  return new Promise((resolve) => {
    let seen = 0;
    const off = e.onChange(() => {
      if (++seen >= count) {
        off();
        resolve();
      }
    });
  });
}

const outboxCount = () => (estate.store.db.prepare('SELECT COUNT(*) AS n FROM outbox').get() as { n: number }).n;
const mailTo = (address: string) => smtp.messages.filter((_, i) => smtp.envelopes[i]!.includes(address));

beforeAll(async () => {
  tmp = makeTempDir('pw-estate-esc-');
  broker = await startMosquitto(tmp.dir, ['ash-farm', 'birch-yard']);
  smtp = await startSmtpSink({ user: 'monitor', pass: 'pw-test' });
  site = await mqtt.connectAsync(broker.url, { protocolVersion: 5, clientId: 'ash-farm-test', username: 'ash-farm', password: sitePassword('ash-farm') });
  const file = join(tmp.dir, 'estate.yaml');
  writeFileSync(
    file,
    `estate: { name: "Hollow Lane estate", timezone: "UTC" }
mqtt: { url: ${broker.url}, username: ${ESTATE_USER.name}, pass_env: PW_ESTATE_PASS, client_id: estate-esc, stale_after: 10h }
sites: [{ id: ash-farm, name: "Ash Farm" }, { id: birch-yard, name: "Birch Yard" }]
contacts:
  - { id: steward, name: "Estate steward", email: "steward@example.org" }
  - { id: manager, name: "Estate manager", email: "manager@example.org" }
escalation:
  default: { steps: [{ after: 0m, notify: [steward] }, { after: 10m, notify: [manager] }], repeat_every: 5m, max_repeats: 5 }
mail: { from: "estate <estate@example.org>", smtp: { host: 127.0.0.1, port: ${smtp.port}, user: monitor, pass: pw-test }, group_window: 0s }
storage: { path: ${join(tmp.dir, 'estate.db')} }
web: { listen: "127.0.0.1:0" }
`,
  );
  estate = await startEstate({ config: loadEstateConfig(file), logger: pino({ level: 'silent' }), env: { ...process.env, PW_ESTATE_PASS: ESTATE_USER.pass }, now: () => clock, listen: false });
}, 20_000);

afterAll(async () => {
  await estate?.stop();
  await site?.endAsync(true);
  await smtp?.close();
  await broker?.close();
  tmp?.cleanup();
});

describe('the estate escalates what a site lists on the broker', () => {
  it('mails at once, repeats after 5 minutes, tells the manager at 10, and stops when the site acknowledges', async () => {
    await publishSite([alarm()]);
    await waitFor(() => mailTo('steward@example.org').length === 1, 10_000, () => 'the first mail');
    expect(mailTo('steward@example.org')[0]!.subject).toBe('[ALARM] Hollow Lane estate: Ash Farm: North shed — tripped');

    clock = T0 + 5 * MIN;
    await waitFor(() => mailTo('steward@example.org').length === 2, 10_000, () => 'the 5-minute repeat');
    expect(mailTo('steward@example.org')[1]!.subject).toContain('not acknowledged');
    expect(mailTo('manager@example.org')).toHaveLength(0);

    clock = T0 + 10 * MIN;
    await waitFor(() => mailTo('manager@example.org').length === 1, 10_000, () => 'the escalation to the manager');

    clock = T0 + 11 * MIN;
    await publishSite([alarm({ state: 'acknowledged', ackedAt: iso(clock), ackedBy: 'anna', note: 'on my way' })]);
    await waitFor(() => mailTo('manager@example.org').length === 2, 10_000, () => 'the acknowledged notice');
    expect(mailTo('manager@example.org')[1]!.subject).toContain('acknowledged by anna at Ash Farm');
    const rows = outboxCount();
    for (const t of [15, 20, 25, 40]) {
      clock = T0 + t * MIN;
      await beats(estate);
    }
    // Nothing more was even queued after the acknowledgement (the outbox is written before any send).
    expect(outboxCount()).toBe(rows);
  }, 40_000);

  it('mails "site not reporting" for a site whose retained status says offline, and "back to normal" when it returns', async () => {
    const birch = await mqtt.connectAsync(broker.url, { protocolVersion: 5, clientId: 'birch-test', username: 'birch-yard', password: sitePassword('birch-yard') });
    try {
      const t = siteTopics('pairwatch', 'birch-yard');
      await birch.publishAsync(t.status, JSON.stringify({ online: false, at: iso(clock), version: 'test', startedAt: null, reason: 'connection lost' }), { qos: 1, retain: true });
      await waitFor(() => smtp.messages.some((m) => m.subject === '[TROUBLE] Hollow Lane estate: Birch Yard — site not reporting'), 10_000, () => 'the not-reporting mail');
      await birch.publishAsync(t.status, JSON.stringify({ online: true, at: iso(clock), version: 'test', startedAt: iso(clock), reason: null }), { qos: 1, retain: true });
      await birch.publishAsync(t.alarms, JSON.stringify({ at: iso(clock), lastEventNo: null, alarms: [] }), { qos: 1, retain: true });
      await waitFor(() => smtp.messages.some((m) => m.subject === '[TROUBLE] Hollow Lane estate: Birch Yard — back to normal'), 10_000, () => 'the back-to-normal mail');
    } finally {
      await birch.endAsync(true);
    }
  }, 20_000);
});
