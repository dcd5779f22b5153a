import { afterEach, describe, expect, it } from 'vitest';
import type { AlarmRecord } from '../../src/alarms/alarmTypes.js';
import type { MonitorCore, MonitorCoreOptions } from '../../src/daemon/monitorCore.js';
import type { NotifyEffect } from '../../src/notify/noticeQueue.js';
import { wireScript } from '../helpers/wireScript.js';
import { createCoreRig, T0 } from './fixtures/coreRig.js';

/**
 * What monitorCore tells the rest of the daemon, and when: the board's change callbacks (exactly when
 * a loop or an alarm changed, so a quiet tick redraws nothing), the read-model version (only ever
 * rising, so a cached page body is never served for a newer state), the MQTT hook inside the alarm
 * transaction, several actions in one commit, and — while the disk fails — which notices go to the
 * direct mailer and what the writer holds under which label (what a stop with a failing disk reports).
 */
const MIN = 60_000;

const rig = createCoreRig('pw-core-callbacks-');
const { start, stores } = rig;
afterEach(() => rig.cleanup());

/** well-pit stops pulsing at 2.1 s (tripped at 3.1 s, seen on the TICK at 3.2 s), barn pulses on. */
const tripScript = () => wireScript(2).hello(0).pulses(1, 100_000, 2_100_000).pulses(2, 100_000, 10_000_000).ticks(0, 4_000_000).build();
const tripped = (core: MonitorCore) => core.openAlarms().find((a) => a.condition === 'tripped');

/** A stand-in for the direct mailer that records what it is handed. */
function recordingDirect() {
  const taken = new WeakSet<NotifyEffect>();
  const claims: Array<{ effect: NotifyEffect; alarm: AlarmRecord | null; now: number }> = [];
  const noted: AlarmRecord[] = [];
  const direct: NonNullable<MonitorCoreOptions['directNotices']> = {
    claim(effect, alarm, now) {
      // As the real one: a notice already taken over is not taken again.
      if (taken.has(effect)) return;
      taken.add(effect);
      claims.push({ effect, alarm, now });
    },
    isClaimed: (effect) => taken.has(effect),
    noteAlarm: (alarm) => void noted.push(alarm),
  };
  return { direct, claims, noted };
}

describe('the board is told exactly when something changed', () => {
  it('per line: "loops" when a loop state changed, "alarms" when alarms did; the MQTT hook only with alarm effects', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    expect(m.changes).toEqual(['loops']);
    const seen: Array<{ loops: boolean; alarms: boolean; told: string[] }> = [];
    for (const l of tripScript()) {
      const before = JSON.stringify([m.core.loopLive('well-pit')!.state, m.core.loopLive('barn')!.state]);
      const alarmsBefore = JSON.stringify(m.core.openAlarms());
      m.changes.length = 0;
      m.feedOne(l);
      seen.push({
        loops: JSON.stringify([m.core.loopLive('well-pit')!.state, m.core.loopLive('barn')!.state]) !== before,
        alarms: JSON.stringify(m.core.openAlarms()) !== alarmsBefore,
        told: [...m.changes],
      });
    }
    for (const s of seen) expect(s.told).toEqual([...(s.loops ? ['loops'] : []), ...(s.alarms ? ['alarms'] : [])]);
    // The HELLO line (a session row, nothing a board shows), both loops going healthy, and the trip.
    expect(seen.filter((s) => s.loops).length).toBe(3);
    expect(seen.filter((s) => s.alarms).length).toBe(1);
    expect(m.effectCalls.length).toBeGreaterThan(0);
    expect(m.effectCalls.every((effects) => effects.length > 0)).toBe(true);
    expect(m.effectCalls.flat().some((e) => e.kind === 'alarm' && e.alarm.condition === 'tripped')).toBe(true);
  });

  it('a quiet tick tells nobody, even with an alarm whose next repeat is not yet due', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    // The decoder keeps talking for 3 minutes, barn healthy throughout; well-pit trips at 3.1 s.
    const lines = wireScript(2).hello(0).pulses(1, 100_000, 2_100_000).pulses(2, 100_000, 180_000_000).ticks(0, 180_000_000).build();
    const upToTrip = lines.filter((l) => l.atUs <= 3_200_000);
    m.feed(upToTrip);
    expect(tripped(m.core)).toBeDefined();
    m.changes.length = 0;
    const calls = m.effectCalls.length;
    for (const l of lines.slice(upToTrip.length)) {
      m.feedOne(l);
      m.core.tick(m.at());
    }
    // Nothing changed for the board in those 3 minutes: the repeat is due only 30 minutes after the raise.
    expect(m.changes).toEqual([]);
    expect(m.effectCalls.length).toBe(calls);
    expect(m.rejected).toEqual([]);
  });

  it('service changes tell "alarms" and "loops", an acknowledgement only "alarms"; without callbacks nothing throws', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(tripScript());
    m.changes.length = 0;
    m.core.alarmAction({ kind: 'ack', alarmId: tripped(m.core)!.id, actor: 'ann', note: null }, m.at());
    expect(m.changes).toEqual(['alarms']);
    m.changes.length = 0;
    m.core.alarmAction({ kind: 'out-of-service', loopId: 'barn', actor: 'ann', note: 'roof work' }, m.at());
    m.core.alarmAction({ kind: 'return-to-service', loopId: 'barn', actor: 'ann', note: null }, m.at());
    expect(m.changes).toEqual(['alarms', 'loops', 'alarms', 'loops']);
    rig.cleanup();

    const quiet = start({ withCallbacks: false });
    expect(() => {
      quiet.core.alarmAction({ kind: 'out-of-service', loopId: 'barn', actor: 'ann', note: 'roof work' }, T0);
      quiet.core.alarmAction({ kind: 'return-to-service', loopId: 'barn', actor: 'ann', note: null }, T0 + 1);
      quiet.core.alarmActionsWith([{ kind: 'tick' }], T0 + 2, 'mail reply', () => {});
    }).not.toThrow();
    expect(quiet.read('SELECT in_service FROM loop_status WHERE loop_id = ?', 'barn')).toEqual([{ in_service: 1 }]);
  });

  it('the read-model version only rises, and rises with every change', () => {
    const m = start();
    const versions = [m.core.version()];
    const bumped = (what: string) => {
      const v = m.core.version();
      expect(v, what).toBeGreaterThan(versions.at(-1)!);
      versions.push(v);
    };
    m.core.linkStatus('main', { state: 'connected' }, T0);
    bumped('port open');
    for (const l of tripScript()) {
      const before = JSON.stringify([m.core.loopLive('well-pit'), m.core.loopLive('barn'), m.core.openAlarms()]);
      m.feedOne(l);
      if (JSON.stringify([m.core.loopLive('well-pit'), m.core.loopLive('barn'), m.core.openAlarms()]) !== before) bumped(`line ${l.line}`);
      else expect(m.core.version()).toBeGreaterThanOrEqual(versions.at(-1)!);
      versions.push(m.core.version());
    }
    m.set(T0 + MIN);
    m.core.minute(m.at(), T0);
    bumped('minute');
    m.core.alarmAction({ kind: 'ack', alarmId: tripped(m.core)!.id, actor: 'ann', note: null }, m.at());
    bumped('acknowledged');
    m.core.linkStatus('main', { state: 'disconnected', reason: 'unplugged' }, m.at());
    bumped('port closed');
  });
});

describe('several actions in one commit (a mail reply)', () => {
  it('accepted and refused results both reach `alongside`, whose rows commit with the accepted actions', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(tripScript());
    const id = tripped(m.core)!.id;
    m.changes.length = 0;
    const results = m.core.alarmActionsWith(
      [
        { kind: 'ack', alarmId: id, actor: 'ann', note: 'on my way' },
        { kind: 'ack', alarmId: 999, actor: 'ann', note: null },
      ],
      m.at(),
      'mail reply',
      (s, seen) => s.kv.set('inbox offset', `${seen.length} seen, ${seen.filter((r) => r.error).length} refused`),
    );
    expect(results.map((r) => r.error?.code ?? 'ok')).toEqual(['ok', expect.stringMatching(/^PW_/)]);
    expect(m.read('SELECT state, acked_by FROM alarms WHERE id = ?', id)).toEqual([{ state: 'acknowledged', acked_by: 'ann' }]);
    expect(m.read("SELECT value FROM kv WHERE key = 'inbox offset'")).toEqual([{ value: '2 seen, 1 refused' }]);
    expect(m.changes).toEqual(['alarms']);

    // Nothing accepted: the caller's rows still commit, and the board is not told.
    m.changes.length = 0;
    m.core.alarmActionsWith([{ kind: 'ack', alarmId: 999, actor: 'ann', note: null }], m.at(), 'mail reply', (s) => s.kv.set('inbox offset', 'later'));
    expect(m.read("SELECT value FROM kv WHERE key = 'inbox offset'")).toEqual([{ value: 'later' }]);
    expect(m.changes).toEqual([]);
  });

  it('raises and clears the monitor\'s own conditions', () => {
    const m = start();
    m.core.raiseSystem('mail-failing', T0 + 1_000);
    expect(m.core.openAlarms().map((a) => [a.source, a.condition, a.priority, a.active])).toEqual([['system', 'mail-failing', 'system', true]]);
    m.core.clearSystem('mail-failing', T0 + 2_000);
    expect(m.read("SELECT source, active, cleared_at FROM alarms WHERE condition = 'mail-failing'")).toEqual([
      { source: 'system', active: 0, cleared_at: new Date(T0 + 2_000).toISOString() },
    ]);
  });
});

describe('while the disk fails', () => {
  it('holds every kind of work under its own label, and writes all of it once the disk takes it', () => {
    let full = true;
    const m = start({ diskFull: () => full });
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(tripScript());
    m.set(T0 + MIN);
    m.core.minute(m.at(), T0);
    m.core.alarmAction({ kind: 'ack', alarmId: tripped(m.core)!.id, actor: 'ann', note: null }, m.at());
    m.core.alarmAction({ kind: 'out-of-service', loopId: 'barn', actor: 'ann', note: 'roof work' }, m.at());
    m.core.linkStatus('main', { state: 'disconnected', reason: 'unplugged' }, m.at() + 1);
    const labels = m.writer.queuedLabels();
    expect(labels).toMatchObject({ start: 1, 'session open': 1, minute: 1, 'alarm ack': 1, 'alarm out-of-service': 1, 'session close': 1 });
    expect(labels.state).toBeGreaterThanOrEqual(3);
    expect(labels.edges).toBeGreaterThanOrEqual(1);
    expect(Object.keys(labels).sort()).toEqual(['alarm ack', 'alarm out-of-service', 'edges', 'minute', 'session close', 'session open', 'start', 'state']);

    full = false;
    expect(m.writer.flush()).toBe('written');
    expect(m.rejected).toEqual([]);
    expect(m.read("SELECT to_state FROM state_changes WHERE loop_id = 'well-pit' ORDER BY id")).toEqual([{ to_state: 'healthy' }, { to_state: 'tripped' }, { to_state: 'offline' }]);
    expect(m.read('SELECT firmware, disconnect_reason FROM decoder_sessions')).toEqual([{ firmware: 'test-1', disconnect_reason: 'unplugged' }]);
    expect(m.read("SELECT state FROM alarms WHERE condition = 'tripped'")).toEqual([{ state: 'acknowledged' }]);
    expect((m.read('SELECT COUNT(*) AS n FROM edges') as Array<{ n: number }>)[0]!.n).toBeGreaterThan(0);
  });

  it('a full queue gives up raw edges and minute counters first, never a state change or an alarm', () => {
    let full = true;
    const m = start({ diskFull: () => full, maxQueued: 1 });
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(tripScript());
    m.core.tick(m.at() + 1_500); // a batch of edges
    m.set(T0 + MIN);
    m.core.minute(m.at(), T0);
    m.core.alarmAction({ kind: 'ack', alarmId: tripped(m.core)!.id, actor: 'ann', note: null }, m.at());
    const labels = m.writer.queuedLabels();
    expect(labels.edges).toBeUndefined();
    expect(labels.minute).toBeUndefined();
    expect(m.writer.status().droppedBatches).toBeGreaterThanOrEqual(2);
    full = false;
    m.writer.flush();
    expect(m.read("SELECT to_state FROM state_changes WHERE loop_id = 'well-pit' ORDER BY id")).toEqual([{ to_state: 'healthy' }, { to_state: 'tripped' }]);
    expect(m.read("SELECT state FROM alarms WHERE condition = 'tripped'")).toEqual([{ state: 'acknowledged' }]);
  });

  it('with the disk fine, no notice is handed to the direct mailer: they wait in pending_notices', () => {
    const d = recordingDirect();
    const m = start({ directNotices: d.direct });
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(tripScript());
    expect(d.claims).toEqual([]);
    expect(m.read('SELECT contact_id, kind FROM pending_notices')).toEqual([{ contact_id: 'office', kind: 'raised' }]);
  });

  it('the commit that finds the disk full hands its alarm notices to the direct mailer; on recovery they are recorded as told, not queued again', () => {
    const d = recordingDirect();
    let full = false;
    const m = start({ diskFull: () => full, directNotices: d.direct });
    m.core.linkStatus('main', { state: 'connected' }, T0);
    const lines = tripScript();
    const beforeTrip = lines.filter((l) => l.atUs <= 3_101_000);
    m.feed(beforeTrip);
    m.core.flushEdges();
    expect(m.writer.status().failing).toBeNull();
    full = true;
    m.feed(lines.slice(beforeTrip.length));
    const alarm = tripped(m.core)!;
    expect(d.claims.map((c) => [c.effect.kind, c.effect.alarmId, c.alarm?.condition, c.alarm?.id, c.now])).toEqual([['notify', alarm.id, 'tripped', alarm.id, T0 + 3_200]]);
    expect(d.claims[0]!.effect.contactIds).toEqual(['office']);
    expect(d.noted.map((a) => [a.id, a.condition])).toContainEqual([alarm.id, 'tripped']);

    // The monitor's own storage-failing alert goes its own way: never claimed here.
    m.core.raiseSystem('storage-failing', m.at());
    expect(d.claims.every((c) => c.alarm?.condition !== 'storage-failing')).toBe(true);
    const claimedBefore = d.claims.length;
    // Already failing: the next alarm's notices are claimed before its commit is even tried.
    m.core.alarmAction({ kind: 'out-of-service', loopId: 'barn', actor: 'ann', note: 'roof' }, m.at() + 10);
    expect(d.claims.length).toBe(claimedBefore);

    full = false;
    expect(m.writer.flush()).toBe('written');
    expect(m.read('SELECT COUNT(*) AS n FROM pending_notices WHERE alarm_id = ?', alarm.id)).toEqual([{ n: 0 }]);
    expect(m.read('SELECT contact_id FROM alarm_recipients WHERE alarm_id = ?', alarm.id)).toEqual([{ contact_id: 'office' }]);
    expect(m.rejected).toEqual([]);
  });

  it('an alarm raised while the disk is already failing is claimed before its commit', () => {
    const d = recordingDirect();
    let full = false;
    const m = start({ diskFull: () => full, directNotices: d.direct });
    m.core.linkStatus('main', { state: 'connected' }, T0);
    full = true;
    m.core.raiseSystem('storage-failing', T0 + 1);
    expect(m.writer.status().failing).not.toBeNull();
    m.feed(tripScript());
    const alarm = tripped(m.core)!;
    expect(d.claims.filter((c) => c.effect.alarmId === alarm.id).map((c) => c.alarm?.condition)).toEqual(['tripped']);
    full = false;
    m.writer.flush();
    expect(m.read('SELECT COUNT(*) AS n FROM pending_notices WHERE alarm_id = ?', alarm.id)).toEqual([{ n: 0 }]);
    // storage-failing's own notice was never claimed, so it waits in the queue like any other.
    expect(m.read("SELECT COUNT(*) AS n FROM pending_notices WHERE alarm_id IN (SELECT id FROM alarms WHERE condition = 'storage-failing')")).toEqual([{ n: 1 }]);
  });
});
