import { mkdirSync, writeFileSync } from 'node:fs';
import { connect, type Socket } from 'node:net';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { scenarioSchema } from '../../src/sim/scenarioSchema.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { apiClient, pollUntil, seedApiToken, type ApiClient } from './fixtures/apiClient.js';
import { killAllDaemons, spawnDaemon, type DaemonProcess } from './fixtures/daemonProcess.js';
import { privateBuild } from './fixtures/privateBuild.js';
import { feedPty, killAllSocat, startSocat, type PluggedPort, type PtyFeeder } from './fixtures/ptyDecoder.js';
import { faultSiteYaml, loopIdOf, OUTBUILDINGS } from './fixtures/siteYaml.js';
import { calmScenario } from './fixtures/stormScenario.js';

/**
 * Issue 9, item 2, directly: the real daemon (`pairwatch run`, a child process) with its web port
 * held by more half-sent requests than `web.max_connections` allows. While the flood holds every
 * connection the web side will take, a node on a real pseudo-terminal decoder stops its heartbeat:
 * the daemon must still read the decoder, classify the trip and get the alarm mail through the SMTP
 * server on loopback. Driven by events (sockets closing, the mail arriving); timeouts only bound a failure.
 */
const LOOPS = 2;
const CAP = 12;
const FLOOD = 40;
const TOKEN = `pwt_${'h'.repeat(43)}`;

let tmp: TempDir;
let sink: SmtpSink;
let socat: PluggedPort | null = null;
let feeder: PtyFeeder | null = null;
let daemon: DaemonProcess;
let port: number;
let api: ApiClient;
const held: Socket[] = [];

beforeAll(async () => {
  privateBuild();
  tmp = makeTempDir('pw-faults-flood-');
  mkdirSync(join(tmp.dir, 'dev'));
  const portPath = join(tmp.dir, 'dev', 'decoder');
  const feedPath = join(tmp.dir, 'dev', 'feed');
  const dbPath = join(tmp.dir, 'data', 'flood.db');
  seedApiToken(dbPath, TOKEN);
  sink = await startSmtpSink({ auth: false });
  const yaml = faultSiteYaml({ port: portPath, loops: LOOPS, dbPath, listen: '127.0.0.1:0', smtpPort: sink.port, groupWindow: '1s', silence: '5s' });
  const web = 'web: { listen: "127.0.0.1:0", public_url: "http://127.0.0.1:8080" }';
  expect(yaml).toContain(web);
  // A long request timeout, so the flood is still holding its connections when the trip comes.
  const configFile = join(tmp.dir, 'site.yaml');
  writeFileSync(configFile, yaml.replace(web, `web: { listen: "127.0.0.1:0", public_url: "http://127.0.0.1:8080", max_connections: ${CAP}, request_timeout: 10m }`));
  socat = await startSocat(portPath, feedPath);
  feeder = feedPty(feedPath, calmScenario({ loops: LOOPS, seed: 9 }));
  daemon = spawnDaemon(configFile);
  const base = await daemon.waitForAddress(20_000);
  port = Number(new URL(base).port);
  api = apiClient(base, TOKEN);
  await pollUntil(async () => (await api.get<Array<{ state: string }>>('/api/v1/loops')).every((l) => l.state === 'healthy'), 20_000, 'every loop healthy');
}, 60_000);

afterAll(async () => {
  for (const s of held.splice(0)) s.destroy();
  feeder?.stop();
  await killAllDaemons();
  await killAllSocat();
  await sink?.close();
  tmp?.cleanup();
});

describe('half-sent requests past the connection cap (issue 9, item 2)', () => {
  it(`${FLOOD} half-sent requests against a cap of ${CAP}: the decoder is still read and the alarm mail still goes out`, async () => {
    const mailsBefore = sink.messages.length;
    // Headers complete, a body promised and never finished: each holds a connection until request_timeout.
    let refused = 0;
    let reachedRefusals: () => void = () => undefined;
    const refusals = new Promise<void>((resolve) => (reachedRefusals = resolve));
    for (let i = 0; i < FLOOD; i++) {
      const socket = connect(port, '127.0.0.1');
      held.push(socket);
      socket.on('error', () => undefined);
      socket.on('connect', () =>
        socket.write(`POST /login HTTP/1.1\r\nHost: 127.0.0.1:${port}\r\nContent-Type: application/x-www-form-urlencoded\r\nContent-Length: 4096\r\n\r\nname=`),
      );
      socket.on('close', () => {
        refused += 1;
        if (refused >= FLOOD - CAP) reachedRefusals();
      });
    }
    // The server closes everything past its cap at once and keeps the rest: the web side is full.
    await refusals;
    const stillHeld = () => held.filter((s) => !s.destroyed);
    // The cap counts every connection: the API client's own keep-alive connection may still hold one place.
    const holding = stillHeld().length;
    expect(holding).toBeGreaterThanOrEqual(CAP - 1);
    expect(holding).toBeLessThanOrEqual(CAP);

    // The node on input 1 stops its heartbeat (the decoder powers up afresh with the new scenario).
    feeder!.stop();
    feeder = feedPty(
      socat!.feed,
      scenarioSchema.parse({
        description: 'flood: the dairy node stops its heartbeat',
        decoder: { inputs: LOOPS, firmware: 'storm-1', tick_ms: 200 },
        seed: 9,
        loops: Array.from({ length: LOOPS }, (_, i) => ({ input: i + 1, period_ms: 500, pulse_ms: 1, jitter: 0.1 })),
        events: [{ at: 4000, input: 1, action: 'freeze' }],
      }),
    );
    const mail = await pollUntil(
      async () => sink.messages.slice(mailsBefore).find((m) => /tripped/.test(m.subject ?? '') && (m.subject ?? '').includes(OUTBUILDINGS[0])),
      40_000,
      `the trip mail for ${OUTBUILDINGS[0]} at the SMTP sink`,
      100,
    );
    expect(mail.subject).toMatch(/^\[ALARM\] Brackenfold: /);
    // The flood was holding the web side the whole time.
    expect(stillHeld()).toHaveLength(holding);
    expect(daemon.isRunning()).toBe(true);

    // Once the flood ends, the web side answers again and shows the trip the decoder reported.
    for (const s of held.splice(0)) s.destroy();
    const loops = await pollUntil(
      async () => {
        try {
          return await api.get<Array<{ id: string; state: string }>>('/api/v1/loops');
        } catch {
          return null;
        }
      },
      30_000,
      'the API answering again',
      100,
    );
    expect(loops.find((l) => l.id === loopIdOf(1))?.state).toBe('tripped');
    expect(loops.find((l) => l.id === loopIdOf(2))?.state).not.toBe('tripped');
  }, 90_000);
});
