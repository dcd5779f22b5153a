import { afterEach, describe, expect, it } from 'vitest';
import { encodeLine } from '../../src/protocol/encodeLine.js';
import { wireScript } from '../helpers/wireScript.js';
import { createCoreRig, T0 } from './fixtures/coreRig.js';

/**
 * monitorCore's remaining paths, each read back the way a user meets it: rows through a second
 * connection, the journal, the board's change callbacks and snapshots, and the writer's queue while the
 * disk fails (its labels are what a stop with a failing disk reports). Fake time throughout: host time
 * is T0 plus the decoder time of each line unless a test moves it on its own.
 */
const MIN = 60_000;

const rig = createCoreRig('pw-core-paths-');
const { start, stores } = rig;
afterEach(() => rig.cleanup());

const line = (body: string) => encodeLine(body).replace(/\n$/, '');
/** Both loops pulsing from 0.1 s until `untilUs`, ticks every 200 ms to `ticksUs`. */
const healthy = (untilUs: number, ticksUs = untilUs) =>
  wireScript(2).hello(0).pulses(1, 100_000, untilUs).pulses(2, 100_000, untilUs).ticks(0, ticksUs).build();
/** well-pit stops pulsing at 2.1 s (tripped at 3.1 s), barn pulses on. */
const tripScript = () => wireScript(2).hello(0).pulses(1, 100_000, 2_100_000).pulses(2, 100_000, 10_000_000).ticks(0, 4_000_000).build();

describe('restart: what the monitor takes over from the file', () => {
  it('numbers new alarms after the highest id ever used, so an old alarm row is never overwritten', () => {
    const first = start();
    first.core.raiseSystem('mail-failing', T0);
    first.core.clearSystem('mail-failing', T0 + 1000);
    // Cleared and acknowledged: closed, so the restart does not load it as an open alarm.
    first.core.alarmAction({ kind: 'ack', alarmId: 1, actor: 'ann', note: null }, T0 + 1500);
    expect(first.core.openAlarms()).toEqual([]);
    const [old] = first.read<{ id: number; condition: string }>('SELECT id, condition FROM alarms');
    expect(old).toEqual({ id: 1, condition: 'mail-failing' });
    stores[0]!.close();
    const second = start();
    second.core.raiseSystem('inbox-failing', T0 + 2000);
    second.core.raiseSystem('mail-failing', T0 + 3000); // a new alarm: the old one is closed
    expect(second.read('SELECT id, condition FROM alarms ORDER BY id')).toEqual([
      { id: 1, condition: 'mail-failing' },
      { id: 2, condition: 'inbox-failing' },
      { id: 3, condition: 'mail-failing' },
    ]);
    expect(second.read('SELECT raised_at FROM alarms WHERE id = 1')).toEqual([{ raised_at: new Date(T0).toISOString() }]);
  });

  it('a decoder whose offline alarm was open at the restart starts offline, and its first line clears that alarm', () => {
    const first = start();
    first.core.linkStatus('main', { state: 'connected' }, T0);
    first.feed(healthy(2_000_000));
    first.set(first.at() + 2_500);
    first.core.tick(first.at());
    expect(first.core.openAlarms().filter((a) => a.condition === 'offline' && a.active)).toHaveLength(1);
    stores[0]!.close();

    const second = start();
    second.core.linkStatus('main', { state: 'connected' }, T0 + 10 * MIN);
    expect(second.core.decoderRuntime('main')).toMatchObject({ offline: true });
    second.core.line('main', line('HELLO 1 2 test-1'), T0 + 10 * MIN + 100);
    expect(second.logs(/^decoder main is talking again$/)).toHaveLength(1);
    expect(second.core.openAlarms().filter((a) => a.condition === 'offline' && a.active)).toEqual([]);
    const [row] = second.read<{ active: number; cleared_at: string }>("SELECT active, cleared_at FROM alarms WHERE condition = 'offline'");
    expect(row).toEqual({ active: 0, cleared_at: new Date(T0 + 10 * MIN + 100).toISOString() });
  });

  it('other open alarms on the decoder, or an offline alarm already cleared, do not start it offline', () => {
    const first = start();
    first.core.linkStatus('main', { state: 'connected' }, T0);
    first.feed(healthy(2_000_000));
    first.core.line('main', line('FAULT 40 2100000 SUPPLY'), T0 + 2_100);
    first.set(T0 + 5_000);
    first.core.tick(first.at()); // silent: offline
    first.core.line('main', line('HELLO 1 2 test-1'), T0 + 5_100); // talking again: offline cleared, not acknowledged
    expect(first.core.openAlarms().map((a) => [a.condition, a.active]).sort()).toEqual([['decoder-fault', true], ['offline', false]]);
    stores[0]!.close();
    const second = start();
    expect(second.core.decoderRuntime('main')).toMatchObject({ offline: false });
  });

  it('keeps the last pulse of each loop across a restart, and only the out-of-service loops out of service', () => {
    const first = start();
    first.core.linkStatus('main', { state: 'connected' }, T0);
    first.feed(healthy(2_000_000));
    first.core.alarmAction({ kind: 'out-of-service', loopId: 'barn', actor: 'ann', note: 'roof work' }, first.at());
    first.set(T0 + MIN);
    first.core.minute(first.at(), T0);
    // Pulses start every 500 ms from 0.1 s: the last before 2.0 s starts at 1.6 s.
    expect(first.read('SELECT loop_id, last_pulse_at FROM loop_status ORDER BY loop_id')).toEqual([
      { loop_id: 'barn', last_pulse_at: new Date(T0 + 1600).toISOString() },
      { loop_id: 'well-pit', last_pulse_at: new Date(T0 + 1600).toISOString() },
    ]);
    stores[0]!.close();

    const second = start();
    expect(second.core.loopLive('well-pit')).toEqual({
      state: 'unknown',
      sinceMs: T0,
      lastPulseAtMs: T0 + 1600,
      intermittent: false,
      quality: { pulses: 0, intervalCount: 0, intervalSumMs: 0, intervalSqSumMs: 0, outOfTolerance: 0, glitches: 0, longPulses: 0, lostFrames: 0 },
      qualitySinceMs: T0,
    });
    expect(second.core.isLoopInService('barn')).toBe(false);
    expect(second.core.isLoopInService('well-pit')).toBe(true);
    expect(second.core.outOfServiceNote('well-pit')).toBeNull();
    expect(second.core.linkOf('main')).toEqual({ state: 'connecting', reason: null, sinceMs: T0 });
  });

  it('a start after a crash closes the session left open, at the last frame heard, and says so in the journal', () => {
    const first = start();
    first.core.linkStatus('main', { state: 'connected' }, T0);
    first.feed(wireScript(2).hello(0).ticks(0, 3_000_000).build());
    first.set(T0 + 3_500);
    first.core.tick(first.at());
    first.set(T0 + MIN);
    first.core.minute(first.at(), T0);
    stores[0]!.close(); // no closeSessions: killed

    const second = start();
    const [warn] = second.logs(/decoder session\(s\) left open by a monitor that did not stop cleanly$/);
    expect(warn).toMatchObject({ level: 40, sessions: 1, msg: 'closed 1 decoder session(s) left open by a monitor that did not stop cleanly' });
    const [session] = second.read<{ disconnected_at: string; disconnect_reason: string; frames: number }>('SELECT disconnected_at, disconnect_reason, frames FROM decoder_sessions');
    // The last TICK was at 3.0 s.
    expect(session).toEqual({ disconnected_at: new Date(T0 + 3000).toISOString(), disconnect_reason: expect.stringMatching(/did not stop cleanly/), frames: 17 });
  });

  it('a clean stop closes every session with its counts and reason; the next start finds nothing to close', () => {
    const first = start();
    first.core.linkStatus('main', { state: 'connected' }, T0);
    first.feed(wireScript(2).hello(0).ticks(0, 1_000_000).build());
    first.core.line('main', 'TICK 9 1 NN*0000', first.at());
    first.core.closeSessions(T0 + 5_000, 'monitor stopped');
    expect(first.read('SELECT disconnected_at, disconnect_reason, frames, bad_frames FROM decoder_sessions')).toEqual([
      { disconnected_at: new Date(T0 + 5_000).toISOString(), disconnect_reason: 'monitor stopped', frames: 7, bad_frames: 1 },
    ]);
    stores[0]!.close();
    const second = start();
    expect(second.logs(/left open/)).toEqual([]);
  });
});

describe('what the journal says about the decoder', () => {
  it('a loop count that matches the config, or a decoder without inputs in the config, is not a warning', () => {
    const matching = start();
    matching.core.linkStatus('main', { state: 'connected' }, T0);
    matching.feed(wireScript(2).hello(0).build());
    expect(matching.logs(/^decoder main started/)).toHaveLength(1);
    expect(matching.logs(/loops but the config says/)).toEqual([]);
    rig.cleanup();

    const unset = start({ decoders: '[{ id: main, port: /dev/null }]' });
    unset.core.linkStatus('main', { state: 'connected' }, T0);
    unset.feed(wireScript(3).hello(0).build());
    expect(unset.logs(/loops but the config says/)).toEqual([]);
  });

  it('checks the HELLO against its own decoder among several', () => {
    const m = start({
      decoders: '[{ id: other, port: /dev/null, inputs: 2 }, { id: main, port: /dev/null, inputs: 3 }]',
      extraLoops: ', { id: gate, name: "Gate", decoder: other, input: 1 }',
    });
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(wireScript(2).hello(0).build());
    expect(m.logs(/^decoder main reports 2 loops but the config says inputs: 3$/)).toHaveLength(1);
  });

  it('before any HELLO, frames must fit the inputs the config gives the decoder', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.core.line('main', line('EDGE 0 100000 3 H'), T0 + 100);
    const dropped = m.logs(/^dropped a line$/);
    expect(dropped).toHaveLength(1);
    expect(String(dropped[0]!.detail)).toMatch(/EDGE loop 3 is past the 2 loops the config gives this decoder \(no HELLO yet\)/);
  });

  it('only garbled lines are logged as dropped, and "port open" names the decoder once per connection', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.core.linkStatus('main', { state: 'connected' }, T0 + 10);
    m.feed(healthy(2_000_000));
    m.core.line('main', encodeLine('FAULT 99 2100000 SUPPLY').replace(/\n$/, ''), m.at());
    m.core.line('main', 'TICK 9 1 NN*0000', m.at());
    // A sequence gap (frames lost on the way) is counted, not logged as a dropped line.
    m.core.line('main', line('TICK 60 2300000 NN'), T0 + 2_300);
    expect(m.logs(/^dropped a line$/)).toHaveLength(1);
    expect(m.logs(/port open$/)).toEqual([expect.objectContaining({ level: 30, decoderId: 'main', msg: 'decoder main port open' })]);
    expect(m.read('SELECT COUNT(*) AS n FROM decoder_sessions')).toEqual([{ n: 1 }]);
  });

  it('a frame stamped far ahead of the host clock: a decoder fault in the journal, the loops start over', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(healthy(2_000_000));
    expect(m.core.loopLive('well-pit')!.state).toBe('healthy');
    // The next TICK claims 7 s later than the last, but only 0.2 s of host time passed: 6.8 s ahead,
    // less the 1 % creep allowed over those 0.2 s (siteStep.ts: DECODER_CLOCK_CREEP) = 6802 ms.
    m.core.line('main', line('TICK 40 9000000 NN'), T0 + 2_200);
    const [warn] = m.logs(/clock is/);
    expect(warn).toMatchObject({ level: 40, decoderId: 'main', aheadMs: 6802 });
    expect(warn!.msg).toBe("decoder main clock is 6802 ms ahead of the host's: frame not applied, its loops start over");
    expect(m.core.loopLive('well-pit')!.state).toBe('unknown');
    expect(m.core.openAlarms().filter((a) => a.condition === 'decoder-fault').map((a) => [a.source, a.active])).toEqual([['main', true]]);
  });

  it('every loop of a decoder tripping within a second is one decoder fault, logged as the link', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(wireScript(2).hello(0).pulses(1, 100_000, 2_100_000).pulses(2, 100_000, 2_100_000).ticks(0, 5_000_000).build());
    const [warn] = m.logs(/^all 2 loops/);
    expect(warn).toMatchObject({ level: 40, decoderId: 'main', loops: 2 });
    expect(warn!.msg).toBe('all 2 loops of decoder main tripped within a second: taken as the link, not 2 trips; the loops start over');
    expect(m.core.openAlarms().map((a) => a.condition)).toEqual(['decoder-fault']);
  });

  it('a decoder fault clears after 10 quiet minutes, not before', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(healthy(2_000_000));
    m.core.line('main', line('FAULT 40 2100000 SUPPLY'), T0 + 2_100);
    const fault = () => m.core.openAlarms().find((a) => a.condition === 'decoder-fault');
    expect(fault()?.active).toBe(true);
    m.set(T0 + 2_100 + 10 * MIN - 1);
    m.core.tick(m.at());
    expect(fault()?.active).toBe(true);
    m.set(T0 + 2_100 + 10 * MIN);
    m.core.tick(m.at());
    expect(fault()?.active).toBe(false);
    expect(m.read("SELECT cleared_at FROM alarms WHERE condition = 'decoder-fault'")).toEqual([{ cleared_at: new Date(T0 + 2_100 + 10 * MIN).toISOString() }]);
  });
});

describe('loop figures the board shows', () => {
  it('the last pulse, the state change with its decoder time, and the minute quality since the bucket', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(tripScript());
    // barn pulses on to 9.6 s.
    expect(m.core.loopLive('barn')!.lastPulseAtMs).toBe(T0 + 9_600);
    expect(m.core.loopLive('well-pit')).toMatchObject({ state: 'tripped', sinceMs: T0 + 3_100, lastPulseAtMs: T0 + 1_600 });
    expect(m.read("SELECT decoder_us FROM state_changes WHERE loop_id = 'well-pit' AND to_state = 'tripped'")).toEqual([{ decoder_us: 3_100_000 }]);
    // Before the roll-up the board shows the previous minute's figures: none yet.
    expect(m.core.loopLive('barn')!.quality.pulses).toBe(0);
    m.set(T0 + 2 * MIN);
    m.core.minute(m.at(), T0 + MIN);
    // barn: pulses every 500 ms from 0.1 to 9.6 s (20), 19 intervals; well-pit: 0.1 … 1.6 s (4), 3 intervals.
    expect(m.core.loopLive('barn')).toMatchObject({ qualitySinceMs: T0 + MIN, quality: expect.objectContaining({ pulses: 20, intervalCount: 19, intervalSumMs: 9_500 }) });
    expect(m.core.loopLive('well-pit')).toMatchObject({ qualitySinceMs: T0 + MIN, quality: expect.objectContaining({ pulses: 4, intervalCount: 3 }) });
  });

  it('three faults within ten minutes flag the loop intermittent; its trouble flaps are then not raised one by one', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    const s = wireScript(2).hello(0).pulses(1, 100_000, 30_000_000).pulses(2, 100_000, 2_000_000);
    // barn goes open (band O for 300 ms, open after 200 ms) four times, healthy again in between.
    for (const startUs of [2_200_000, 6_200_000, 10_200_000, 14_200_000]) s.edge(startUs, 2, 'O').edge(startUs + 300_000, 2, 'N').pulses(2, startUs + 400_000, startUs + 3_900_000);
    m.feed(s.ticks(0, 18_000_000).build());
    expect(m.core.loopLive('barn')!.intermittent).toBe(true);
    const barn = m.core.openAlarms().filter((a) => a.loopId === 'barn');
    expect(barn.filter((a) => a.condition === 'intermittent')).toHaveLength(1);
    // The first open raised a trouble; the flaps once the flag was on did not raise more.
    expect(barn.filter((a) => a.condition === 'open')).toHaveLength(1);
    expect(m.read("SELECT COUNT(*) AS n FROM state_changes WHERE loop_id = 'barn' AND to_state = 'open'")).toEqual([{ n: 4 }]);
  });
});

describe('raw edges', () => {
  it('never holds 2000 or more edges in memory: a full batch is stored at once', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    const lines = healthy(260_000_000, 0);
    let edgesFed = 0;
    let mostWaiting = 0;
    const stored = m.real.db.prepare('SELECT COUNT(*) FROM edges').pluck();
    for (const l of lines) {
      m.feed([l]);
      if (l.line.startsWith('EDGE')) edgesFed += 1;
      mostWaiting = Math.max(mostWaiting, edgesFed - (stored.get() as number));
    }
    expect(edgesFed).toBeGreaterThan(2000);
    expect(mostWaiting).toBe(1999);
  });

  it('a stored batch also marks when the session last heard the decoder', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(wireScript(2).hello(0).pulse(100_000, 1).pulse(600_000, 1).build());
    m.set(T0 + 1_700);
    m.core.tick(m.at());
    expect(m.read('SELECT last_frame_at FROM decoder_sessions')).toEqual([{ last_frame_at: new Date(T0 + 601).toISOString() }]);
    expect(m.read('SELECT COUNT(*) AS n FROM edges')).toEqual([{ n: 4 }]);
    expect(m.rejected).toEqual([]);
  });
});

describe('the minute roll-up', () => {
  /** A connected core and a feeder of one minute's TICKs (good) and garbled or skipped ones (bad). */
  function minuteRig() {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    let seq = 0;
    let us = 0;
    let minuteNo = 0;
    m.feed([{ atUs: 0, line: line('HELLO 1 2 test-1') }]);
    const minute = (good: number, garbled: number, skipped = 0) => {
      for (let i = 0; i < good; i++) {
        us += 100_000;
        if (i === 0 && skipped > 0) seq = (seq + skipped) % 65536;
        m.feed([{ atUs: us, line: line(`TICK ${seq} ${us} NN`) }]);
        seq = (seq + 1) % 65536;
      }
      for (let i = 0; i < garbled; i++) m.core.line('main', 'TICK 9 1 NN*0000', m.at());
      minuteNo += 1;
      m.set(T0 + minuteNo * MIN);
      m.core.minute(m.at(), T0 + (minuteNo - 1) * MIN);
    };
    // A first minute holding the HELLO, so each minute below counts only its own frames.
    minute(9, 0);
    const noisyNow = () => m.core.openAlarms().filter((a) => a.condition === 'link-noisy' && a.active).length;
    return { m, minute, noisyNow, noisyLogs: () => m.logs(/link is noisy/) };
  }

  it('noisy at exactly 10 % with 20+ bad frames; not at 9.9 %, nor at 20 % with fewer than 20', () => {
    const a = minuteRig();
    a.minute(225, 25); // 25 / 250 = 10 %
    expect(a.noisyNow()).toBe(1);
    rig.cleanup();
    const b = minuteRig();
    b.minute(200, 22); // 22 / 222 ≈ 9.9 %
    expect(b.noisyNow()).toBe(0);
    b.minute(40, 10); // 20 %, but only 10 bad
    expect(b.noisyNow()).toBe(0);
    b.minute(20, 20); // 50 %, 20 bad
    expect(b.noisyNow()).toBe(1);
  });

  it('counts each minute on its own: a busy clean minute does not hide a noisy one after it', () => {
    const r = minuteRig();
    r.minute(500, 0);
    r.minute(100, 25); // 20 % of this minute's frames
    expect(r.noisyNow()).toBe(1);
    expect(r.noisyLogs().map((l) => [l.bad, l.frames])).toEqual([[25, 100]]);
  });

  it('lost frames (sequence gaps) count as bad; stays raised between 2 % and 10 %, clears below 2 %, logs once', () => {
    const r = minuteRig();
    r.minute(100, 0, 30); // 30 frames skipped
    expect(r.noisyNow()).toBe(1);
    r.minute(95, 5); // 5 %: inside the band, stays
    expect(r.noisyNow()).toBe(1);
    r.minute(100, 25); // noisy again: still one alarm, one log line
    r.minute(98, 2); // exactly 2 %: stays
    expect(r.noisyNow()).toBe(1);
    r.minute(100, 1); // under 2 %: clears
    expect(r.noisyNow()).toBe(0);
    expect(r.noisyLogs()).toHaveLength(1);
  });

  it('a noisy link that goes quiet for a whole minute clears', () => {
    const r = minuteRig();
    r.minute(100, 30);
    expect(r.noisyNow()).toBe(1);
    r.minute(0, 0);
    expect(r.noisyNow()).toBe(0);
  });

  it('stores the session counters and the last valid frame only for a connected decoder', () => {
    const r = minuteRig();
    r.minute(10, 0);
    expect(r.m.read('SELECT frames, last_frame_at FROM decoder_sessions')).toEqual([{ frames: 20, last_frame_at: new Date(T0 + 1_900).toISOString() }]);
    r.m.core.linkStatus('main', { state: 'disconnected', reason: 'unplugged' }, T0 + MIN + 10);
    r.m.set(T0 + 2 * MIN);
    expect(() => r.m.core.minute(r.m.at(), T0 + MIN)).not.toThrow();
    expect(r.m.rejected).toEqual([]);
  });
});

describe('links', () => {
  it('disconnected without a reason is "port closed"; a disconnect of a link never connected changes nothing', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'disconnected', reason: 'no such device' }, T0);
    expect(m.read('SELECT COUNT(*) AS n FROM decoder_sessions')).toEqual([{ n: 0 }]);
    expect(m.core.decoderRuntime('main')).toMatchObject({ offline: false });
    m.core.linkStatus('main', { state: 'connected' }, T0 + 100);
    m.feed(wireScript(2).hello(0).build().map((l) => ({ ...l, atUs: 200_000 })));
    m.core.linkStatus('main', { state: 'disconnected' }, T0 + 1_000);
    expect(m.read('SELECT disconnect_reason FROM decoder_sessions')).toEqual([{ disconnect_reason: 'port closed' }]);
    expect(m.logs(/^decoder main offline: port closed$/)).toHaveLength(1);
    expect(m.core.linkOf('main')).toEqual({ state: 'disconnected', reason: null, sinceMs: T0 + 1_000 });
  });

  it('a new connection is a new session: sequence numbers start afresh (no lost frames counted)', () => {
    const m = start();
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.feed(wireScript(2).hello(0).ticks(0, 1_000_000).build());
    m.core.linkStatus('main', { state: 'disconnected', reason: 'unplugged' }, T0 + 1_100);
    m.core.linkStatus('main', { state: 'connected' }, T0 + 1_200);
    // The decoder kept counting while unplugged: its next TICK's seq is far on. Without a HELLO.
    m.core.line('main', line('TICK 500 1300000 NN'), T0 + 1_300);
    m.core.line('main', line('TICK 501 1500000 NN'), T0 + 1_500);
    m.core.closeSessions(T0 + 2_000, 'monitor stopped');
    expect(m.read('SELECT frames, lost_frames FROM decoder_sessions ORDER BY id')).toEqual([
      { frames: 7, lost_frames: 0 },
      { frames: 2, lost_frames: 0 },
    ]);
  });

  it('the earliest moment a talking decoder would count as silent; none while none talks', () => {
    const m = start({
      decoders: '[{ id: main, port: /dev/null, inputs: 2, silence: 3s }, { id: shed, port: /dev/null, inputs: 1, silence: 5s }]',
      extraLoops: ', { id: gate, name: "Gate", decoder: shed, input: 1 }',
    });
    // Silence counts from start-up, so a decoder that never speaks goes offline too.
    expect(m.core.nextSilenceAtMs()).toBe(T0 + 3_000);
    m.core.linkStatus('main', { state: 'connected' }, T0);
    m.core.linkStatus('shed', { state: 'connected' }, T0);
    m.core.line('shed', line('HELLO 1 1 test-1'), T0 + 100);
    m.core.line('main', line('HELLO 1 2 test-1'), T0 + 100);
    expect(m.core.nextSilenceAtMs()).toBe(T0 + 3_100);
    m.core.line('main', line('HELLO 1 2 test-1'), T0 + 4_000);
    expect(m.core.nextSilenceAtMs()).toBe(T0 + 5_100);
    m.set(T0 + 5_100);
    m.core.tick(m.at());
    expect(m.core.decoderRuntime('shed')).toMatchObject({ offline: true });
    // shed is offline now: only main (heard at 4.0 s, silence 3 s) is left.
    expect(m.core.nextSilenceAtMs()).toBe(T0 + 7_000);
    expect(m.core.decoderRuntime('nope')).toBeNull();
  });
});
