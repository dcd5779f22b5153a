import Database from 'better-sqlite3';
import { join } from 'node:path';
import pino from 'pino';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import type { SiteConfig } from '../../src/config/schema.js';
import { createMonitorCore } from '../../src/daemon/monitorCore.js';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { wireScript } from '../helpers/wireScript.js';

/**
 * monitorCore promises that a state change, the alarm it raises, its audit rows and its queued notices
 * are one transaction. A store wrapper makes the k-th store call inside the tripping step's transaction
 * fail (a full disk), for every k; whatever k, a second connection must see either none of the four or,
 * once the disk takes the queued work, all of them. Splitting the commit in two fails this for the calls
 * of the second half.
 */
const T0 = Date.UTC(2026, 0, 15, 2, 0, 0);
const REPOS = ['stateChanges', 'loopStatus', 'alarms', 'audit', 'decoderSessions'] as const;

interface Faulty {
  store: Store;
  /** Fail the k-th counted call (1-based) inside the next transactions; null: no failure. */
  failAt: number | null;
  /** Calls counted in the last transaction. */
  lastCalls: number;
}

/** Counts repo calls and statement runs on `db` (the notice queue writes through it) per transaction. */
function faultyStore(real: Store): Faulty {
  let calls = 0;
  const control: Faulty = { store: real, failAt: null, lastCalls: 0 };
  const count = () => {
    calls += 1;
    if (control.failAt !== null && calls === control.failAt) {
      throw Object.assign(new Error('database or disk is full'), { code: 'SQLITE_FULL' });
    }
  };
  const wrapRepo = <R extends object>(repo: R): R => {
    const out: Record<string, unknown> = {};
    for (const [name, value] of Object.entries(repo)) {
      out[name] = typeof value === 'function' ? (...args: unknown[]) => (count(), (value as (...a: unknown[]) => unknown).apply(repo, args)) : value;
    }
    return out as R;
  };
  const db = new Proxy(real.db, {
    get(target, prop, receiver) {
      if (prop !== 'prepare') {
        const value = Reflect.get(target, prop, receiver) as unknown;
        return typeof value === 'function' ? (value as (...a: unknown[]) => unknown).bind(target) : value;
      }
      return (sql: string) => {
        const statement = target.prepare(sql);
        return new Proxy(statement, {
          get(st, p) {
            const v = Reflect.get(st, p, st) as unknown;
            if (p === 'run') return (...args: unknown[]) => (count(), (v as (...a: unknown[]) => unknown).apply(st, args));
            return typeof v === 'function' ? (v as (...a: unknown[]) => unknown).bind(st) : v;
          },
        });
      };
    },
  });
  const wrapped: Record<string, unknown> = { ...real, db };
  for (const name of REPOS) wrapped[name] = wrapRepo(real[name]);
  wrapped.transaction = <T>(fn: () => T): T => {
    calls = 0;
    try {
      return real.transaction(fn);
    } finally {
      control.lastCalls = calls;
    }
  };
  control.store = wrapped as unknown as Store;
  return control;
}

describe('commitSiteEffects is all or nothing', () => {
  let tmp: TempDir;
  let config: SiteConfig;
  const opened: Store[] = [];
  const lines = wireScript(2).hello(0).pulses(1, 100_000, 2_100_000).pulses(2, 100_000, 10_000_000).ticks(0, 4_000_000).build();

  beforeEach(() => {
    tmp = makeTempDir('pairwatch-onetx-');
    config = parseConfig(`
site: { name: "Test Farm" }
decoders: [{ id: main, port: /dev/null, inputs: 2 }]
loops: [{ id: well-pit, name: "Well pit", decoder: main, input: 1 }, { id: barn, name: "Barn", decoder: main, input: 2 }]
contacts: [{ id: office, name: Office, email: office@example.org }]
escalation: { default: { steps: [{ after: 0m, notify: [office] }], repeat_every: 30m, max_repeats: 10 } }
mail: { from: "m <m@example.org>", group_window: 10s }
storage: { path: ${join(tmp.dir, 'site.db')} }
`);
  });
  afterEach(() => {
    for (const store of opened.splice(0)) store.close();
    tmp.cleanup();
  });

  /** A monitor core on a fresh database file `name`, its store wrapped. */
  function start(name: string) {
    const real = openStore({ path: join(tmp.dir, name) });
    opened.push(real);
    const faulty = faultyStore(real);
    let clock = T0;
    const writer = createDurableWriter({ store: faulty.store, onFailing() {}, onRecovered() {}, onRejected() {}, now: () => clock, retryMs: 1e12 });
    const core = createMonitorCore({ config, store: faulty.store, writer, logger: pino({ level: 'silent' }), now: clock });
    core.linkStatus('main', { state: 'connected' }, clock);
    const feed = (index: number) => {
      clock = T0 + Math.round(lines[index]!.atUs / 1000);
      core.line('main', lines[index]!.line, clock);
    };
    return { faulty, writer, core, feed };
  }

  /** What a second connection sees of the trip: its state change, alarm, audit rows and notices. */
  function committed(name: string): { changes: number; alarms: number; audit: number; notices: number } {
    const db = new Database(join(tmp.dir, name), { readonly: true });
    try {
      const n = (sql: string) => (db.prepare(sql).get() as { n: number }).n;
      return {
        changes: n("SELECT COUNT(*) AS n FROM state_changes WHERE loop_id = 'well-pit' AND to_state = 'tripped'"),
        alarms: n("SELECT COUNT(*) AS n FROM alarms WHERE source = 'well-pit' AND condition = 'tripped'"),
        audit: n("SELECT COUNT(*) AS n FROM audit WHERE alarm_id IN (SELECT id FROM alarms WHERE source = 'well-pit')"),
        notices: n("SELECT COUNT(*) AS n FROM pending_notices WHERE alarm_id IN (SELECT id FROM alarms WHERE source = 'well-pit')"),
      };
    } finally {
      db.close();
    }
  }

  it('a failure at any store call of the tripping step leaves none of it; recovery writes all of it', () => {
    // A clean run first: which line trips well-pit, and how many store calls its transaction makes.
    const probe = start('probe.db');
    let tripLine = -1;
    for (let i = 0; i < lines.length && tripLine < 0; i++) {
      probe.feed(i);
      if (probe.core.loopLive('well-pit')!.state === 'tripped') tripLine = i;
    }
    expect(tripLine).toBeGreaterThan(0);
    const callsInTrip = probe.faulty.lastCalls;
    const whole = committed('probe.db');
    expect(whole).toEqual({ changes: 1, alarms: 1, audit: expect.any(Number), notices: 1 });
    expect(whole.audit).toBeGreaterThanOrEqual(1);
    // state change + loop status + alarm + audit + notice (and its recipient row), at the least
    expect(callsInTrip).toBeGreaterThanOrEqual(5);

    for (let k = 1; k <= callsInTrip; k++) {
      const name = `fail-at-${k}.db`;
      const run = start(name);
      for (let i = 0; i < tripLine; i++) run.feed(i);
      run.faulty.failAt = k;
      run.feed(tripLine);
      run.faulty.failAt = null;
      expect({ k, ...committed(name) }).toEqual({ k, changes: 0, alarms: 0, audit: 0, notices: 0 });
      expect(run.writer.pending()).toBeGreaterThan(0);
      expect(run.writer.flush()).toBe('written');
      expect({ k, ...committed(name) }).toEqual({ k, ...whole });
    }
  });
});
