import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { apiClient, pollUntil, seedApiToken, type ApiClient } from './fixtures/apiClient.js';
import { killAllDaemons, spawnDaemon, type DaemonProcess } from './fixtures/daemonProcess.js';
import { privateBuild } from './fixtures/privateBuild.js';
import { feedPty, killAllSocat, startSocat, type PluggedPort, type PtyFeeder } from './fixtures/ptyDecoder.js';
import { faultSiteYaml, loopIdOf } from './fixtures/siteYaml.js';
import { calmScenario } from './fixtures/stormScenario.js';

/**
 * The decoder's USB cable pulled and plugged back, for real: the daemon (a child process) reads a
 * socat pseudo-terminal through serialport; socat is killed (the port vanishes) and started again on
 * the same link path. Driven by events, not by the clock: each step waits for what the previous one
 * caused (the timeouts below only stop a hung test), and the checks are about order and cause — offline
 * raised after the pull and not before, the port opened again only after it came back, one daemon
 * process throughout. How fast that happens is a benchmark figure, not a test assertion.
 */
const LOOPS = 4;
const TOKEN = `pwt_${'u'.repeat(43)}`;
/** Only a hung test's limit; nothing is asserted about how long a step takes. */
const HUNG_MS = 30_000;

interface ApiDecoder {
  id: string;
  status: string;
}
interface ApiAlarm {
  id: number;
  source?: string;
  condition: string;
  state: string;
}
interface ApiLoop {
  id: string;
  state: string;
}

let tmp: TempDir;
let portPath: string;
let feedPath: string;
let daemon: DaemonProcess;
let api: ApiClient;
let socat: PluggedPort | null = null;
let feeder: PtyFeeder | null = null;

beforeAll(async () => {
  privateBuild();
  tmp = makeTempDir('pw-faults-unplug-');
  mkdirSync(join(tmp.dir, 'dev'));
  portPath = join(tmp.dir, 'dev', 'decoder');
  feedPath = join(tmp.dir, 'dev', 'feed');
  const dbPath = join(tmp.dir, 'data', 'brackenfold.db');
  seedApiToken(dbPath, TOKEN);
  const configFile = join(tmp.dir, 'site.yaml');
  writeFileSync(configFile, faultSiteYaml({ port: portPath, loops: LOOPS, dbPath, listen: '127.0.0.1:0' }));
  socat = await startSocat(portPath, feedPath);
  feeder = feedPty(feedPath, calmScenario({ loops: LOOPS, seed: 11 }));
  daemon = spawnDaemon(configFile);
  api = apiClient(await daemon.waitForAddress(20_000), TOKEN);
}, 60_000);

afterAll(async () => {
  feeder?.stop();
  await killAllDaemons();
  await killAllSocat();
  tmp?.cleanup();
});

const decoderStatus = async () => (await api.get<ApiDecoder[]>('/api/v1/decoders')).find((d) => d.id === 'yard')?.status;
const offlineAlarm = async (listed: 'active' | 'all' = 'active') =>
  (await api.get<ApiAlarm[]>(`/api/v1/alarms?status=${listed}`)).find((a) => a.condition === 'offline');

describe('decoder unplugged and plugged back (socat pseudo-terminal through serialport)', () => {
  it('raises offline after the pull, reconnects after the port comes back, and never restarts', async () => {
    // Commissioned and healthy first.
    await pollUntil(async () => (await api.get<ApiLoop[]>('/api/v1/loops')).every((l) => l.state === 'healthy'), 20_000, 'every loop healthy');
    expect(await decoderStatus()).toBe('connected');
    expect(await offlineAlarm()).toBeUndefined();

    // Pull the cable.
    feeder!.stop();
    await socat!.unplug();
    const portOpensBeforePull = daemon.logs.filter((e) => /port open/.test(e.msg)).length;
    const raised = await pollUntil(() => offlineAlarm(), HUNG_MS, 'the offline alarm');
    expect(raised.state).toBe('unacknowledged');
    // The log is read from the child's stdout, which can trail the API by a moment: wait for it, do not race it.
    await pollUntil(async () => daemon.logs.some((e) => /offline/.test(e.msg)) || undefined, HUNG_MS, 'the offline log line');
    expect(await decoderStatus()).not.toBe('connected');
    const loops = await api.get<ApiLoop[]>('/api/v1/loops');
    expect(loops.map((l) => [l.id, l.state])).toEqual(Array.from({ length: LOOPS }, (_, i) => [loopIdOf(i + 1), 'offline']));

    // Left unplugged: the daemon keeps retrying and stays up; it cannot open a port that is not there.
    expect(daemon.isRunning()).toBe(true);
    expect(daemon.logs.filter((e) => /port open/.test(e.msg))).toHaveLength(portOpensBeforePull);

    // Plug it back: the same device path appears again and the decoder powers up (HELLO first).
    socat = await startSocat(portPath, feedPath);
    feeder = feedPty(feedPath, calmScenario({ loops: LOOPS, seed: 12 }));
    await pollUntil(async () => (await decoderStatus()) === 'connected', HUNG_MS, 'the decoder connected again');

    // Talking again clears the offline condition, and the loops prove themselves healthy afresh.
    await pollUntil(async () => (await offlineAlarm()) === undefined || (await offlineAlarm())?.state === 'returned-unacknowledged', HUNG_MS, 'offline cleared');
    await pollUntil(async () => (await api.get<ApiLoop[]>('/api/v1/loops')).every((l) => l.state === 'healthy'), HUNG_MS, 'every loop healthy again');

    // One daemon process throughout: never exited, started once.
    expect(daemon.isRunning()).toBe(true);
    expect(daemon.logs.filter((e) => e.msg.startsWith('monitoring Brackenfold'))).toHaveLength(1);
    expect(daemon.logs.filter((e) => /port open/.test(e.msg))).toHaveLength(2);
  }, 90_000);
});
