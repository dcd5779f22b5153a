import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { startMosquitto, type MosquittoBroker } from '../helpers/mosquittoBroker.js';
import { stopChild } from '../helpers/stopChild.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';
import { siteEnv, writeSimSite } from './fixtures/simSite.js';
import { recordTopics, schemaValidator } from './fixtures/topicRecorder.js';

/**
 * "Site not reporting within 1.5 × keep-alive", at the broker itself: two real site processes (the
 * built CLI, keep-alive 2 s) and a subscriber to their retained status. One is killed with SIGKILL
 * (the kernel closes its socket, so the broker publishes its Last Will at once); the other is frozen
 * with SIGSTOP (the socket stays open and silent, so only the broker's keep-alive timeout can end it:
 * OASIS MQTT 5.0 §3.1.2.10 — the server closes a connection silent for 1.5 × keep-alive — and §3.1.2.5,
 * which makes that publish the Will). The test asserts order and cause, not speed; the deadlines only
 * bound a hung test.
 */
const KEEPALIVE_MS = 2000;
const HUNG_MS = 15_000;
let tmp: TempDir;
let broker: MosquittoBroker;
let recorder: Awaited<ReturnType<typeof recordTopics>>;
const children = new Map<string, ChildProcess>();
/** Every status message heard, with when it arrived here. */
const heard: Array<{ siteId: string; online: boolean; reason: string | null; at: number }> = [];
const valid = schemaValidator();
const invalid: string[] = [];

beforeAll(async () => {
  const cli = join(process.cwd(), 'dist', 'src', 'cli', 'main.js');
  if (!existsSync(cli)) throw new Error('dist/ is missing: run `npm run build` first');
  tmp = makeTempDir('pw-will-');
  broker = await startMosquitto(tmp.dir, ['site-k', 'site-s']);
  recorder = await recordTopics(broker.url, 'pairwatch/+/status');
  recorder.client.on('message', (topic, payload) => {
    const body = JSON.parse(payload.toString()) as { online: boolean; reason: string | null };
    const problem = valid('pairwatch', topic, body);
    if (problem) invalid.push(problem);
    heard.push({ siteId: topic.split('/')[1]!, online: body.online, reason: body.reason, at: Date.now() });
  });
  for (const id of ['site-k', 'site-s']) {
    const { configFile } = writeSimSite(tmp.dir, id, broker.url, { keepalive: `${KEEPALIVE_MS / 1000}s` });
    children.set(id, spawn(process.execPath, [cli, 'run', '--config', configFile], { env: { ...siteEnv(id), PAIRWATCH_LOG_LEVEL: 'warn' }, stdio: 'ignore' }));
  }
  await waitFor(() => ['site-k', 'site-s'].every((id) => heard.some((h) => h.siteId === id && h.online)), HUNG_MS, () => 'both sites online');
}, 30_000);

afterAll(async () => {
  for (const child of children.values()) {
    child.kill('SIGCONT');
    await stopChild(child, 'SIGKILL');
  }
  await recorder?.close();
  await broker?.close();
  tmp?.cleanup();
});

const lastOf = (siteId: string) => heard.filter((h) => h.siteId === siteId).at(-1);

describe('a site that dies uncleanly reads offline by its Last Will', () => {
  it('kill -9: the socket closes, the broker publishes the Will ("connection lost") after the kill', async () => {
    expect(lastOf('site-k')).toMatchObject({ online: true });
    const killedAt = Date.now();
    children.get('site-k')!.kill('SIGKILL');
    await waitFor(() => lastOf('site-k')?.online === false, HUNG_MS, () => 'the Will of site-k');
    const will = lastOf('site-k')!;
    expect(will.reason).toBe('connection lost');
    expect(will.at).toBeGreaterThanOrEqual(killedAt);
    expect(invalid).toEqual([]);
  }, 20_000);

  it('SIGSTOP: the socket stays open; the Will comes only once the broker times out the keep-alive', async () => {
    const frozen = children.get('site-s')!;
    expect(lastOf('site-s')).toMatchObject({ online: true });
    const frozenAt = Date.now();
    frozen.kill('SIGSTOP');
    await waitFor(() => lastOf('site-s')?.online === false, HUNG_MS, () => 'the Will of site-s');
    const will = lastOf('site-s')!;
    expect(will.reason).toBe('connection lost');
    // Cause, as a lower bound: the site's last packet came at most one keep-alive before the freeze (it
    // sends a heartbeat or PINGREQ every keep-alive), so a timeout cannot fire sooner than 0.5 × keep-alive
    // after it. A Will within that is a closed socket, which a stopped process does not cause.
    expect(will.at - frozenAt).toBeGreaterThanOrEqual(KEEPALIVE_MS / 2);

    // Thawed, the site finds its connection gone, reconnects and says online again.
    frozen.kill('SIGCONT');
    await waitFor(() => lastOf('site-s')?.online === true, HUNG_MS, () => 'site-s online again after SIGCONT');
    expect(invalid).toEqual([]);
  }, 40_000);
});
