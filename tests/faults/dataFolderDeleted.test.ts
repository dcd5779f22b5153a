import { rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { apiClient, pollUntil, seedApiToken } from './fixtures/apiClient.js';
import { startDecoderFeeder, type DecoderFeeder } from './fixtures/decoderFeeder.js';
import { killAllDaemons, spawnDaemon, type DaemonProcess } from './fixtures/daemonProcess.js';
import { privateBuild } from './fixtures/privateBuild.js';
import { faultSiteYaml } from './fixtures/siteYaml.js';
import { stormScenario } from './fixtures/stormScenario.js';

/**
 * Issue 16 item 6: the data folder deleted under a running daemon went unnoticed — writes went on
 * into the unlinked file, /healthz stayed 200, and state changes were stored in no database anyone
 * could open again. The real daemon (a child process) runs on a flapping decoder; the test deletes the
 * whole data folder and then expects "storage failing" in the log, /healthz and the API, the state
 * changes after the deletion held (not written to the lost file), and a stop that says what it held.
 */
const LOOPS = 4;
const TOKEN = `pwt_${'d'.repeat(43)}`;

let tmp: TempDir;
let dataDir: string;
let feeder: DecoderFeeder;
let daemon: DaemonProcess;

beforeAll(async () => {
  privateBuild();
  tmp = makeTempDir('pw-faults-rmdata-');
  dataDir = join(tmp.dir, 'data');
  const dbPath = join(dataDir, 'brackenfold.db');
  feeder = await startDecoderFeeder(stormScenario({ loops: LOOPS, seconds: 600, seed: 0x5eed_0616, firstFaultAtMs: 1500 }));
  const configFile = join(tmp.dir, 'site.yaml');
  writeFileSync(configFile, faultSiteYaml({ port: `tcp://127.0.0.1:${feeder.port}`, loops: LOOPS, dbPath }));
  seedApiToken(dbPath, TOKEN, 'operator', 'rm-test');
  daemon = spawnDaemon(configFile);
}, 60_000);

afterAll(async () => {
  await killAllDaemons();
  await feeder?.close();
  tmp?.cleanup();
});

describe('the data folder deleted while running (issue 16 item 6)', () => {
  it('raises storage failing, shows it in /healthz and the API, and holds the state changes that follow', async () => {
    const address = await daemon.waitForAddress();
    const api = apiClient(address, TOKEN);
    // Running and storing: a first state change to a fault from the storm.
    await daemon.waitForLog((e) => /^loop bldg-\d+: \w+ → (tripped|open|shorted)/.test(e.msg), 20_000, 'a first fault state change');
    expect((await fetch(`${address}/healthz`)).status).toBe(200);

    rmSync(dataDir, { recursive: true, force: true });
    const deletedAt = daemon.logs.length;

    const failing = await daemon.waitForLog((e) => e.level >= 50 && /storage failing/.test(e.msg), 20_000, 'storage failing after the folder was deleted');
    expect(failing.msg).toMatch(/deleted|replaced/);
    expect(failing.msg).toMatch(/systemctl stop pairwatch/); // says what to do

    const health = await pollUntil(async () => {
      const response = await fetch(`${address}/healthz`);
      return response.status === 503 ? ((await response.json()) as { checks: Array<{ name: string; ok: boolean; reason: string | null }> }) : null;
    }, 10_000, '/healthz to answer 503');
    expect(health.checks.find((c) => c.name === 'store')).toMatchObject({ ok: false });
    const alarms = await api.get<Array<{ condition: string; active: boolean }>>('/api/v1/alarms?status=active');
    expect(alarms.some((a) => a.condition === 'storage-failing' && a.active)).toBe(true);

    // The storm goes on: state changes after the deletion are logged, and held in memory rather than written to the lost file.
    await daemon.waitForLog((e) => daemon.logs.indexOf(e) > deletedAt && /^loop bldg-\d+: /.test(e.msg), 20_000, 'a state change after the deletion');
    await daemon.terminate();
    const stopLine = daemon.logs.find((e) => /^stopping with \d+ writes? the disk never took/.test(e.msg));
    expect(stopLine, 'the stop says what was never stored').toBeDefined();
    expect(Object.keys((stopLine as unknown as { queued: Record<string, number> }).queued)).toContain('state');
  }, 90_000);
});
