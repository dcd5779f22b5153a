import { join } from 'node:path';
import pino from 'pino';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { PRIORITY_RANK } from '../../src/model/condition.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { insertApiToken } from '../../src/store/accountRepos.js';
import { openStore } from '../../src/store/openStore.js';
import { newApiToken, sha256Hex } from '../../src/web/auth/secretToken.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { wireScript } from '../helpers/wireScript.js';

/**
 * The API keeps the serialised /loops and /alarms bodies until the monitor core's version moves.
 * Each test changes one thing a reader can see and checks the next response shows it: a version
 * that missed any kind of change would hand back the stale body.
 */
describe('cached API bodies follow every change in the monitor core', () => {
  let tmp: TempDir;
  let monitor: Monitor;
  let token: string;
  let t0: number;

  beforeEach(async () => {
    tmp = makeTempDir('pairwatch-cache-');
    const dbPath = join(tmp.dir, 'site.db');
    const config = parseConfig(`
site: { name: "Cache Test Croft" }
decoders: [{ id: main, port: "tcp://127.0.0.1:9", inputs: 3, silence: 10m }]
loops:
  - { id: byre, name: "Byre", decoder: main, input: 1 }
  - { id: dairy, name: "Dairy", decoder: main, input: 2 }
  - { id: forge, name: "Forge", decoder: main, input: 3 }
storage: { path: ${dbPath} }
`);
    token = newApiToken();
    const store = openStore({ path: dbPath });
    insertApiToken(store.db, { name: 'cache-test', tokenHash: sha256Hex(token), role: 'viewer', createdAt: Date.now() });
    store.close();
    monitor = await startMonitor({ config, configDir: tmp.dir, logger: pino({ level: 'silent' }), listen: false, announce: false });
    t0 = Date.now();
  });
  afterEach(async () => {
    await monitor?.stop('test over', 3000);
    tmp?.cleanup();
  });

  const get = async <T>(url: string): Promise<T> => {
    const res = await monitor.web.inject({ method: 'GET', url, headers: { authorization: `Bearer ${token}` } });
    expect(res.statusCode).toBe(200);
    expect(res.headers['content-type']).toBe('application/json; charset=utf-8');
    return res.json() as T;
  };
  type Loop = { id: string; state: string; lastPulseAt: string | null; inService: boolean; alarm: { condition: string; state: string } | null };
  type Alarm = { id: number; loopId: string | null; condition: string; state: string };
  const loops = () => get<Loop[]>('/api/v1/loops');
  const alarms = () => get<Alarm[]>('/api/v1/alarms');
  /** Lines at host time t0 + decoder time, as if they arrived in real time. */
  const feed = (lines: Array<{ atUs: number; line: string }>) => {
    for (const { atUs, line } of lines) monitor.core.line('main', line, t0 + Math.round(atUs / 1000));
  };
  // Byre and dairy healthy; forge pulses until 1.0 s and then trips (1500 ms without a pulse).
  const board = () => wireScript(3).hello(0).pulses(1, 100_000, 4_000_000).pulses(2, 150_000, 4_000_000).pulses(3, 120_000, 1_000_000).ticks(0, 4_000_000);

  it('a pulse, a state change and an alarm show at once, and an unchanged board gives the same bytes', async () => {
    const before = await loops();
    expect(before.every((l) => l.state === 'unknown')).toBe(true);
    // The byre's last pulse (4.1 s) comes after the last TICK (4.0 s): held back to be fed below.
    const script = board().pulse(4_100_000, 1).build();
    feed(script.slice(0, -2));
    const first = await loops();
    expect(first.find((l) => l.id === 'byre')!.state).toBe('healthy');
    expect(first.find((l) => l.id === 'forge')).toMatchObject({ state: 'tripped', alarm: { condition: 'tripped', state: 'unacknowledged' } });
    const again = await monitor.web.inject({ method: 'GET', url: '/api/v1/loops', headers: { authorization: `Bearer ${token}` } });
    expect(again.json()).toEqual(first);

    // One more pulse on the byre: its last-pulse time must move in the very next response.
    feed(script.slice(-2));
    const after = await loops();
    expect(after.find((l) => l.id === 'byre')!.lastPulseAt).not.toBe(first.find((l) => l.id === 'byre')!.lastPulseAt);
    expect(after.find((l) => l.id === 'byre')!.lastPulseAt).toBe(new Date(t0 + 4_100).toISOString());
  });

  it('an acknowledgement and a loop taken out of service show at once', async () => {
    feed(board().build());
    const open = await alarms();
    const trip = open.find((a) => a.loopId === 'forge' && a.condition === 'tripped')!;
    expect(trip.state).toBe('unacknowledged');
    monitor.core.alarmAction({ kind: 'ack', alarmId: trip.id, actor: 'test', note: null }, Date.now());
    expect((await alarms()).find((a) => a.id === trip.id)!.state).toBe('acknowledged');
    expect((await loops()).find((l) => l.id === 'forge')!.alarm).toMatchObject({ state: 'acknowledged' });

    expect((await loops()).find((l) => l.id === 'dairy')!.inService).toBe(true);
    monitor.core.alarmAction({ kind: 'out-of-service', loopId: 'dairy', actor: 'test', note: 'roof repairs' }, Date.now());
    expect((await loops()).find((l) => l.id === 'dairy')!.inService).toBe(false);
  });

  it("each tile shows the alarm a full sort would put first (priority, then active, then oldest)", () => {
    feed(board().build());
    // The decoder's own alarm (offline: no loop, source the decoder) competes with every loop's.
    monitor.core.handle({ kind: 'link-down', decoderId: 'main', reason: 'cable pulled' }, Date.now());
    const open = monitor.core.openAlarms().filter((a) => ['unacknowledged', 'acknowledged', 'returned-unacknowledged', 'shelved'].includes(a.state));
    // The rule as the board documents it, written out the slow way for comparison.
    const expected = (loopId: string) =>
      open
        .filter((a) => a.loopId === loopId || (a.loopId === null && a.source === 'main'))
        .sort((a, b) => PRIORITY_RANK[a.priority] - PRIORITY_RANK[b.priority] || Number(b.active) - Number(a.active) || a.raisedAt - b.raisedAt)[0]?.id ?? null;
    const models = monitor.read.loops();
    for (const view of models) expect(view.alarm?.id ?? null, view.id).toBe(expected(view.id));
    expect(open.some((a) => a.condition === 'offline' && a.loopId === null)).toBe(true);
    expect(open.some((a) => a.condition === 'tripped' && a.loopId === 'forge')).toBe(true);
  });
});

