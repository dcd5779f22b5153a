import Database from 'better-sqlite3';
import { join } from 'node:path';
import pino from 'pino';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { createMonitorCore, type MonitorCore } from '../../src/daemon/monitorCore.js';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { wireScript } from '../helpers/wireScript.js';

const T0 = Date.UTC(2026, 0, 15, 2, 0, 0);
const MIN = 60_000;

describe('monitor core with fake time and a real SQLite file', () => {
  let tmp: TempDir;
  let store: Store;
  let core: MonitorCore;
  let clock = T0;

  beforeEach(() => {
    tmp = makeTempDir('pairwatch-core-');
    const config = parseConfig(`
site: { name: "Test Farm" }
decoders: [{ id: main, port: /dev/null, inputs: 2 }]
loops: [{ id: well-pit, name: "Well pit", decoder: main, input: 1 }, { id: barn, name: "Barn", decoder: main, input: 2 }]
contacts: [{ id: office, name: Office, email: office@example.org }, { id: oncall, name: "On call", email: oncall@example.org }]
escalation:
  default:
    steps: [{ after: 0m, notify: [office] }, { after: 20m, notify: [oncall] }]
    repeat_every: 30m
    max_repeats: 10
mail: { from: "m <m@example.org>", group_window: 10s }
storage: { path: ${join(tmp.dir, 'site.db')} }
`);
    clock = T0;
    store = openStore({ path: join(tmp.dir, 'site.db') });
    const writer = createDurableWriter({ store, onFailing() {}, onRecovered() {}, now: () => clock });
    core = createMonitorCore({ config, store, writer, logger: pino({ level: 'silent' }), now: clock });
    core.linkStatus('main', { state: 'connected' }, clock);
  });
  afterEach(() => {
    store.close();
    tmp?.cleanup();
  });

  /** Feeds lines, each at host time T0 + its decoder time. */
  const feed = (lines: Array<{ atUs: number; line: string }>) => {
    for (const { atUs, line } of lines) {
      clock = T0 + Math.round(atUs / 1000);
      core.line('main', line, clock);
    }
  };

  it('commits the state change, its alarm, the audit row and the queued notice together', () => {
    feed(wireScript(2).hello(0).pulses(1, 100_000, 2_100_000).pulses(2, 100_000, 10_000_000).ticks(0, 4_000_000).build());
    // Read with a second connection: only committed rows are visible to it.
    const db = new Database(join(tmp.dir, 'site.db'), { readonly: true });
    try {
      const change = db.prepare("SELECT at FROM state_changes WHERE loop_id = 'well-pit' AND to_state = 'tripped'").get() as { at: string };
      const alarm = db.prepare("SELECT id, raised_at, state, priority FROM alarms WHERE source = 'well-pit'").get() as { id: number; raised_at: string; state: string; priority: string };
      const audit = db.prepare('SELECT action FROM audit WHERE alarm_id = ? ORDER BY id').all(alarm.id) as Array<{ action: string }>;
      const notice = db.prepare('SELECT contact_id, due_at FROM pending_notices WHERE alarm_id = ?').all(alarm.id) as Array<{ contact_id: string; due_at: string }>;
      // Pulses start at 0.1, 0.6, 1.1 and 1.6 s; tripped 1500 ms after the last start (issue 2's default
      // trip window) → decoder 3.1 s, which is host T0 + 3100 ms here.
      expect(Date.parse(change.at)).toBe(T0 + 3100);
      expect(alarm).toMatchObject({ state: 'unacknowledged', priority: 'alarm' });
      expect(audit.map((a) => a.action)).toContain('raise');
      // Storm grouping: the notice waits out the 10 s window before it becomes a mail.
      expect(notice).toEqual([{ contact_id: 'office', due_at: expect.any(String) }]);
      expect(Date.parse(notice[0]!.due_at) - Date.parse(alarm.raised_at)).toBe(10_000);
    } finally {
      db.close();
    }
  });

  it('escalates on the policy timetable and stops when acknowledged (issue 3 example)', () => {
    feed(wireScript(2).hello(0).pulses(1, 100_000, 2_100_000).pulses(2, 100_000, 10_000_000).ticks(0, 4_000_000).build());
    const alarm = core.openAlarms().find((a) => a.condition === 'tripped')!;
    const noticesFor = (contact: string) =>
      (store.db.prepare('SELECT kind FROM pending_notices WHERE alarm_id = ? AND contact_id = ? ORDER BY id').all(alarm.id, contact) as Array<{ kind: string }>).map((r) => r.kind);
    const at = (ms: number) => {
      clock = alarm.raisedAt + ms;
      core.tick(clock);
    };
    at(20 * MIN - 1000);
    expect(noticesFor('oncall')).toEqual([]);
    at(20 * MIN);
    expect(noticesFor('oncall')).toEqual(['escalated']);
    at(30 * MIN);
    expect(noticesFor('office')).toEqual(['raised', 'repeat']);
    expect(core.alarmAction({ kind: 'ack', alarmId: alarm.id, actor: 'ann', note: 'on my way' }, clock).error).toBeUndefined();
    at(60 * MIN);
    expect(noticesFor('office')).toEqual(['raised', 'repeat', 'acknowledged']);
    expect(noticesFor('oncall')).toEqual(['escalated', 'repeat', 'acknowledged']);
  });

  it('one decoder going silent is one offline trouble, cleared when it talks again', () => {
    feed(wireScript(2).hello(0).pulses(1, 100_000, 2_000_000).pulses(2, 100_000, 2_000_000).ticks(0, 2_000_000).build());
    clock += 2000;
    core.tick(clock);
    const offline = core.openAlarms().filter((a) => a.condition === 'offline');
    expect(offline).toHaveLength(1);
    expect(offline[0]).toMatchObject({ source: 'main', priority: 'trouble' });
    expect(core.loopLive('well-pit')!.state).toBe('offline');
    feed(wireScript(2).hello(0).build().map((l) => ({ ...l, atUs: (clock - T0 + 10) * 1000 })));
    expect(core.openAlarms().find((a) => a.condition === 'offline')?.active ?? false).toBe(false);
  });
});
