import { performance } from 'node:perf_hooks';
import mqtt, { type MqttClient } from 'mqtt';
import { parseEstateConfig } from '../src/estate/loadEstateConfig.js';
import { startEstate } from '../src/estate/startEstate.js';
import { siteTopics } from '../src/mqtt/siteTopics.js';
import { insertApiToken } from '../src/store/accountRepos.js';
import { newApiToken, sha256Hex } from '../src/web/auth/secretToken.js';
import type { BenchOptions, BenchResult, BenchRow } from './benchTypes.js';
import { startBenchBroker } from './support/benchBroker.js';
import { percentile } from './support/percentile.js';
import { silentLogger } from './support/silentLogger.js';
import { startSmtpReceiver } from './support/smtpReceiver.js';
import { makeTempFolder } from './support/tempFolder.js';

/**
 * Many sites on one broker: N simulated sites × 16 loops publish the topic layout at the rates a real
 * site does (each loop's retained state once a minute, a heartbeat per keep-alive), then an alarm
 * storm (4 loops of every site trip within a second). The real estate board reads them all and mails
 * a real SMTP server. Each figure stands beside a reference from the same run: a bare MQTT QoS 1
 * round trip, a bare publisher → subscriber stream, and a constant static file from the same server.
 */
const LOOPS = 16;
const STORM_LOOPS = 4;
const KEEPALIVE_S = 30;

function vs(figure: string, value: number, unit: string, reference: string, referenceValue: number): BenchRow {
  return { figure, value, unit, reference, referenceValue, ratio: referenceValue === 0 ? null : value / referenceValue, target: null, met: null };
}

const iso = (ms: number) => new Date(ms).toISOString();

function loopBody(site: number, loop: number, state: 'healthy' | 'tripped', alarmId: number | null, at: number) {
  return {
    id: `loop-${loop}`, name: `Loop ${loop}`, location: null, state, since: iso(at), lastPulseAt: iso(at), inService: true, intermittent: false, periodMs: 500,
    alarm: alarmId === null ? null : { id: alarmId, condition: 'tripped', priority: 'alarm', state: 'unacknowledged' },
    lineQuality: { since: iso(at - 60_000), pulses: 120, intervalMeanMs: 500, intervalJitterMs: 3, outOfTolerance: 0, glitches: 0, longPulses: 0, lostFrames: 0 },
  };
}

function alarmBody(id: number, loop: number, at: number) {
  return { id, loopId: `loop-${loop}`, source: `loop-${loop}`, condition: 'tripped', priority: 'alarm', state: 'unacknowledged', active: true, raisedAt: iso(at), clearedAt: null, ackedAt: null, ackedBy: null, note: null, shelvedUntil: null, shelveReason: null };
}

/** Bare QoS 1 round trips through the same broker: publish, hear it back on the same connection. */
async function bareRoundTrips(url: string, count: number): Promise<number[]> {
  const c = await mqtt.connectAsync(url, { protocolVersion: 5, clientId: 'bench-rtt' });
  await c.subscribeAsync('bench/rtt', { qos: 1 });
  const samples: number[] = [];
  for (let i = 0; i < count; i++) {
    const t0 = performance.now();
    await new Promise<void>((resolve) => {
      c.once('message', () => resolve());
      void c.publishAsync('bench/rtt', String(i), { qos: 1 });
    });
    samples.push(performance.now() - t0);
  }
  await c.endAsync();
  return samples;
}

/** A bare stream: one publisher, one subscriber, `count` QoS 1 messages; messages/s at the subscriber. */
async function bareStream(url: string, count: number): Promise<number> {
  const sub = await mqtt.connectAsync(url, { protocolVersion: 5, clientId: 'bench-sub' });
  await sub.subscribeAsync('bench/stream', { qos: 1 });
  const pub = await mqtt.connectAsync(url, { protocolVersion: 5, clientId: 'bench-pub' });
  let got = 0;
  const t0 = performance.now();
  const done = new Promise<void>((resolve) => sub.on('message', () => ++got === count && resolve()));
  for (let i = 0; i < count; i++) void pub.publishAsync('bench/stream', '{"at":"x"}', { qos: 1 });
  await done;
  const rate = count / ((performance.now() - t0) / 1000);
  await pub.endAsync();
  await sub.endAsync();
  return rate;
}

export async function run(opts: BenchOptions): Promise<BenchResult> {
  const sites = opts.smoke ? 5 : 100;
  const folder = makeTempFolder('estate');
  const { port: brokerPort } = await import('node:net').then(
    (net) => new Promise<{ port: number }>((resolve) => { const s = net.createServer().listen(0, '127.0.0.1', () => { const p = (s.address() as { port: number }).port; s.close(() => resolve({ port: p })); }); }),
  );
  const broker = await startBenchBroker(folder.dir, brokerPort);
  const mails: number[] = [];
  const smtp = await startSmtpReceiver((m) => mails.push(m.acceptedMs));
  const ids = Array.from({ length: sites }, (_, i) => `site-${String(i + 1).padStart(3, '0')}`);
  const clients: MqttClient[] = [];
  const estate = await startEstate({
    config: parseEstateConfig(
      `estate: { name: "Bench estate" }
mqtt: { url: "${broker.url}", client_id: bench-estate }
sites:
${ids.map((id) => `  - { id: ${id} }`).join('\n')}
contacts: [{ id: desk, name: "Desk", email: "desk@example.org" }]
mail: { from: "estate <estate@example.org>", smtp: { host: 127.0.0.1, port: ${smtp.port} }, group_window: 1s }
storage: { path: ${folder.path('estate.db')} }
web: { listen: "127.0.0.1:0" }
`,
      'bench-estate.yaml',
    ),
    logger: silentLogger(),
    listen: false,
  });
  const token = newApiToken();
  insertApiToken(estate.store.db, { name: 'bench', role: 'viewer', tokenHash: sha256Hex(token), createdAt: Date.now() });
  let received = 0;
  const unlisten = estate.onChange(() => undefined);
  try {
    // Every site comes up: status, summary, its loops, decoder and an empty alarm list (retained), as a site does on connect.
    for (const id of ids) {
      const t = siteTopics('pairwatch', id);
      const startedAt = Date.now();
      const c = await mqtt.connectAsync(broker.url, {
        protocolVersion: 5, clientId: `pairwatch-${id}`, keepalive: KEEPALIVE_S,
        will: { topic: t.status, payload: Buffer.from(JSON.stringify({ online: false, at: iso(startedAt), version: 'bench', startedAt: iso(startedAt), reason: 'connection lost' })), qos: 1, retain: true },
      });
      clients.push(c);
      const now = Date.now();
      await c.publishAsync(t.status, JSON.stringify({ online: true, at: iso(now), version: 'bench', startedAt: iso(startedAt), reason: null }), { qos: 1, retain: true });
      await c.publishAsync(t.heartbeat, JSON.stringify({ at: iso(now), version: 'bench', uptimeS: 0, intervalS: KEEPALIVE_S, lastEventNo: null }), { qos: 0 });
      for (let l = 1; l <= LOOPS; l++) await c.publishAsync(t.loop(`loop-${l}`), JSON.stringify(loopBody(0, l, 'healthy', null, now)), { qos: 1, retain: true });
      await c.publishAsync(t.alarms, JSON.stringify({ at: iso(now), lastEventNo: null, alarms: [] }), { qos: 1, retain: true });
      await c.publishAsync(t.summary, JSON.stringify({ at: iso(now), siteName: id, timezone: 'UTC', url: null, worst: 'normal', counts: { alarm: 0, trouble: 0, system: 0 }, loops: { total: LOOPS, healthy: LOOPS, tripped: 0, open: 0, shorted: 0, offline: 0, unknown: 0, outOfService: 0 } }), { qos: 1, retain: true });
    }
    const allIn = () => ids.every((id) => Object.keys(estate.book().sites[id]!.loops).length === LOOPS && estate.book().sites[id]!.summary !== null);
    while (!allIn()) await new Promise((r) => setTimeout(r, 20));

    // Background at the real rates while the storm runs: each loop's retained state once a minute, spread out.
    const perSecond = Math.max(1, Math.round((sites * LOOPS) / 60));
    let tick = 0;
    const background = setInterval(() => {
      for (let k = 0; k < perSecond; k++, tick++) {
        const s = tick % sites;
        const l = (Math.floor(tick / sites) % LOOPS) + 1;
        if (l <= STORM_LOOPS) continue;
        void clients[s]!.publishAsync(siteTopics('pairwatch', ids[s]!).loop(`loop-${l}`), JSON.stringify(loopBody(s, l, 'healthy', null, Date.now())), { qos: 1, retain: true });
      }
    }, 1000);

    // The storm: STORM_LOOPS loops of every site trip; each is an event, the loop, the alarm list and the summary.
    const onBoard = new Map<string, { t0: number; t1: number | null }>();
    const stop = estate.onChange(() => {
      received++;
      for (const [key, sample] of onBoard) {
        if (sample.t1 !== null) continue;
        const [id, alarmId] = key.split('#') as [string, string];
        if (estate.book().sites[id]!.alarms.some((a) => a.id === Number(alarmId))) sample.t1 = performance.now();
      }
    });
    const stormStart = performance.now();
    received = 0;
    for (let l = 1; l <= STORM_LOOPS; l++) {
      for (let s = 0; s < sites; s++) {
        const id = ids[s]!;
        const t = siteTopics('pairwatch', id);
        const now = Date.now();
        const alarms = Array.from({ length: l }, (_, k) => alarmBody(k + 1, k + 1, now));
        onBoard.set(`${id}#${l}`, { t0: performance.now(), t1: null });
        const c = clients[s]!;
        void c.publishAsync(t.events, JSON.stringify({ eventNo: l, kind: 'raised', at: iso(now), actor: 'system', note: null, alarm: alarmBody(l, l, now) }), { qos: 1, properties: { messageExpiryInterval: 86_400 } });
        void c.publishAsync(t.loop(`loop-${l}`), JSON.stringify(loopBody(s, l, 'tripped', l, now)), { qos: 1, retain: true });
        void c.publishAsync(t.alarms, JSON.stringify({ at: iso(now), lastEventNo: l, alarms }), { qos: 1, retain: true });
        void c.publishAsync(t.summary, JSON.stringify({ at: iso(now), siteName: id, timezone: 'UTC', url: null, worst: 'alarm', counts: { alarm: l, trouble: 0, system: 0 }, loops: { total: LOOPS, healthy: LOOPS - l, tripped: l, open: 0, shorted: 0, offline: 0, unknown: 0, outOfService: 0 } }), { qos: 1, retain: true });
      }
    }
    const expected = sites * STORM_LOOPS;
    const deadline = Date.now() + 120_000;
    while ([...onBoard.values()].some((s) => s.t1 === null) && Date.now() < deadline) await new Promise((r) => setTimeout(r, 10));
    const stormSeconds = (performance.now() - stormStart) / 1000;
    const stormMessages = received;
    const lastT0 = Math.max(...[...onBoard.values()].map((s) => s.t0));
    while (!mails.some((at) => at >= lastT0) && Date.now() < deadline) await new Promise((r) => setTimeout(r, 20));
    clearInterval(background);
    stop();

    // Board render with every site loaded, beside a constant static file from the same server.
    const renderSamples: number[] = [];
    const staticSamples: number[] = [];
    const rounds = opts.smoke ? 30 : 300;
    for (let i = 0; i < rounds; i++) {
      let t0 = performance.now();
      await estate.web.inject({ method: 'GET', url: '/', headers: { authorization: `Bearer ${token}` } });
      renderSamples.push(performance.now() - t0);
      t0 = performance.now();
      await estate.web.inject({ method: 'GET', url: '/static/site.css' });
      staticSamples.push(performance.now() - t0);
    }
    const rtt = await bareRoundTrips(broker.url, opts.smoke ? 50 : 500);
    const bareRate = await bareStream(broker.url, Math.max(200, stormMessages));

    const boardLatency = [...onBoard.values()].filter((s) => s.t1 !== null).map((s) => s.t1! - s.t0);
    // One grouped mail covers every alarm raised before it was composed: an alarm's mail is the first accepted after it.
    const mailLatency: number[] = [];
    for (const sample of onBoard.values()) {
      const first = mails.filter((at) => at >= sample.t0).sort((a, b) => a - b)[0];
      if (first !== undefined) mailLatency.push(first - sample.t0);
    }
    const rttP99 = percentile(rtt, 99);
    return {
      name: 'estate',
      title: `Estate board: ${sites} sites × ${LOOPS} loops on one Mosquitto, alarm storm of ${expected}`,
      rows: [
        vs('board render p99', percentile(renderSamples, 99), 'ms', 'static file from the same server, p99', percentile(staticSamples, 99)),
        vs('site alarm → estate board p99', percentile(boardLatency, 99), 'ms', 'bare MQTT QoS 1 round trip, p99', rttP99),
        vs('site alarm → estate mail accepted p99', percentile(mailLatency, 99), 'ms', 'bare MQTT QoS 1 round trip, p99', rttP99),
        vs('messages/s through the broker to the estate (storm)', stormMessages / stormSeconds, 'msg/s', 'bare publisher → subscriber stream', bareRate),
        { figure: 'storm alarms measured', value: boardLatency.length, unit: 'alarms', reference: null, referenceValue: null, ratio: null, target: null, met: null },
      ],
      notes: [
        `${sites} simulated sites (MQTT clients publishing the documented topic layout; not full monitors, so the estate and broker are what is measured), ${LOOPS} loops each: retained loop state once a minute per loop (${perSecond} msg/s), heartbeat per ${KEEPALIVE_S} s keep-alive.`,
        `Storm: ${STORM_LOOPS} loops of every site trip at once; each is an event (QoS 1, message expiry), the loop, the alarm list and the summary — ${expected * 4} messages. Board latency ends when the estate's book lists the alarm; mail latency when the SMTP server on loopback accepted the first estate mail after the alarm (grouping window 1 s, so a storm is a few mails, not one per alarm; ${mails.length} mails).`,
        "The simulated sites run in the same Node process as the estate and share 2 cores with Mosquitto, so the storm figures include the publishers' own work.",
        'Board render: GET / through fastify inject with a viewer token, every site loaded. References are measured in the same run on the same broker and server.',
      ],
    };
  } finally {
    unlisten();
    for (const c of clients) await c.endAsync(true).catch(() => undefined);
    await estate.stop();
    await smtp.close();
    await broker.stop();
    folder.remove();
  }
}
