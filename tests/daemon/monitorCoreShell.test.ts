import Database from 'better-sqlite3';
import { join } from 'node:path';
import pino from 'pino';
import { afterEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { createMonitorCore } from '../../src/daemon/monitorCore.js';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { wireScript } from '../helpers/wireScript.js';

/**
 * The rest of monitorCore's promises, read back through a second connection (committed rows only):
 * decoder sessions (opened, HELLO, closed with reason and counts), raw edges stored in batches (a
 * second after the first of them), out of service and back across a restart, a restart that records
 * every loop as unknown, and a change callback after each commit.
 */
const T0 = Date.UTC(2026, 0, 15, 2, 0, 0);
let tmp: TempDir | undefined;
const stores: Store[] = [];
afterEach(() => {
  for (const s of stores.splice(0)) s.close();
  tmp?.cleanup();
  tmp = undefined;
});

function start(dir: string) {
  const config = parseConfig(`
site: { name: "Test Farm" }
decoders: [{ id: main, port: /dev/null }]
loops: [{ id: well-pit, name: "Well pit", decoder: main, input: 1 }, { id: barn, name: "Barn", decoder: main, input: 2 }]
contacts: [{ id: office, name: Office, email: office@example.org }]
mail: { from: "m <m@example.org>" }
storage: { path: ${join(dir, 'site.db')} }
`);
  let clock = T0;
  const store = openStore({ path: join(dir, 'site.db') });
  stores.push(store);
  const changes: string[] = [];
  const writer = createDurableWriter({ store, onFailing() {}, onRecovered() {}, now: () => clock });
  const core = createMonitorCore({ config, store, writer, logger: pino({ level: 'silent' }), now: clock, onChange: (what) => changes.push(what) });
  const feed = (lines: Array<{ atUs: number; line: string }>) => {
    for (const { atUs, line } of lines) {
      clock = T0 + Math.round(atUs / 1000);
      core.line('main', line, clock);
    }
  };
  const read = <T>(sql: string, ...args: unknown[]): T[] => {
    const db = new Database(join(dir, 'site.db'), { readonly: true });
    try {
      return db.prepare(sql).all(...args) as T[];
    } finally {
      db.close();
    }
  };
  return { core, feed, read, changes, store, set: (ms: number) => (clock = ms), now: () => clock };
}

describe('monitor core: sessions, edges, service, restart', () => {
  it('records the decoder session from port open through HELLO to close, with counts and reason', () => {
    tmp = makeTempDir('pw-core-shell-');
    const m = start(tmp.dir);
    m.core.linkStatus('main', { state: 'connected' }, T0);
    expect(m.core.linkOf('main')).toMatchObject({ state: 'connected', sinceMs: T0 });
    m.feed(wireScript(2, { firmware: 'fw-3' }).hello(0).ticks(0, 1_000_000).build());
    m.core.linkStatus('main', { state: 'disconnected', reason: 'device removed' }, T0 + 2000);
    const [session] = m.read<Record<string, unknown>>('SELECT * FROM decoder_sessions');
    expect(session).toMatchObject({
      decoder_id: 'main',
      connected_at: new Date(T0).toISOString(),
      hello_at: new Date(T0).toISOString(),
      firmware: 'fw-3',
      loops: 2,
      disconnected_at: new Date(T0 + 2000).toISOString(),
      disconnect_reason: 'device removed',
      frames: 7,
      bad_frames: 0,
      lost_frames: 0,
    });
    expect(m.core.loopLive('well-pit')).toMatchObject({ state: 'offline' });
    expect(m.core.linkOf('main')).toMatchObject({ state: 'disconnected', reason: 'device removed' });
    expect(m.changes.filter((c) => c === 'loops').length).toBeGreaterThanOrEqual(2);
    expect(m.core.linkOf('nope')).toBeNull();
    expect(m.core.loopLive('nope')).toBeNull();
  });

  it('stores raw edges once a second (not before), and only then', () => {
    tmp = makeTempDir('pw-core-shell-');
    const m = start(tmp.dir);
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(wireScript(2).hello(0).pulse(100_000, 1).build());
    expect(m.read('SELECT * FROM edges')).toHaveLength(0);
    m.set(T0 + 1099);
    m.core.tick(m.now());
    expect(m.read('SELECT * FROM edges')).toHaveLength(0);
    m.set(T0 + 1100);
    m.core.tick(m.now());
    expect(m.read<{ band: string; decoder_us: number }>('SELECT band, decoder_us FROM edges ORDER BY id')).toEqual([
      { band: 'H', decoder_us: 100_000 },
      { band: 'N', decoder_us: 101_000 },
    ]);
  });

  it('takes a loop out of service and back, with who and why, and keeps it across a restart', () => {
    tmp = makeTempDir('pw-core-shell-');
    const m = start(tmp.dir);
    expect(m.core.isLoopInService('barn')).toBe(true);
    const out = m.core.alarmAction({ kind: 'out-of-service', loopId: 'barn', actor: 'ann', note: 'roof work' }, T0 + 1000);
    expect(out.error).toBeUndefined();
    expect(m.core.isLoopInService('barn')).toBe(false);
    expect(m.core.outOfServiceNote('barn')).toBe('roof work');
    expect(m.read('SELECT in_service, service_note, service_by, service_at FROM loop_status WHERE loop_id = ?', 'barn')).toEqual([
      { in_service: 0, service_note: 'roof work', service_by: 'ann', service_at: new Date(T0 + 1000).toISOString() },
    ]);
    expect(m.changes).toEqual(['alarms', 'loops']);
    expect(m.core.alarmAction({ kind: 'out-of-service', loopId: 'barn', actor: 'ann', note: 'again' }, T0 + 2000).error?.message).toMatch(/already out of service/);

    // A restart of the monitor keeps it out of service.
    m.store.close();
    const again = start(tmp.dir);
    expect(again.core.isLoopInService('barn')).toBe(false);
    expect(again.core.outOfServiceNote('barn')).toBe('roof work');
    expect(again.core.alarmAction({ kind: 'return-to-service', loopId: 'barn', actor: 'ben', note: null }, T0 + 3000).error).toBeUndefined();
    expect(again.core.isLoopInService('barn')).toBe(true);
    expect(again.core.outOfServiceNote('barn')).toBeNull();
    expect(again.read('SELECT in_service, service_by FROM loop_status WHERE loop_id = ?', 'barn')).toEqual([{ in_service: 1, service_by: 'ben' }]);
  });

  it('a restart records every loop that was known as changed to unknown, with the reason', () => {
    tmp = makeTempDir('pw-core-shell-');
    const m = start(tmp.dir);
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(wireScript(2).hello(0).pulses(1, 100_000, 2_000_000).pulses(2, 100_000, 2_000_000).ticks(0, 2_000_000).build());
    expect(m.read('SELECT state FROM loop_status ORDER BY loop_id')).toEqual([{ state: 'healthy' }, { state: 'healthy' }]);
    m.store.close();
    start(tmp.dir);
    const restarted = m.read<{ loop_id: string; from_state: string; to_state: string; reason: string }>(
      "SELECT loop_id, from_state, to_state, reason FROM state_changes WHERE reason = 'monitor started' ORDER BY loop_id",
    );
    expect(restarted).toEqual([
      { loop_id: 'barn', from_state: 'healthy', to_state: 'unknown', reason: 'monitor started' },
      { loop_id: 'well-pit', from_state: 'healthy', to_state: 'unknown', reason: 'monitor started' },
    ]);
    expect(m.read('SELECT state FROM loop_status ORDER BY loop_id')).toEqual([{ state: 'unknown' }, { state: 'unknown' }]);
  });
});
