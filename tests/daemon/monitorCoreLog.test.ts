import { join } from 'node:path';
import { Writable } from 'node:stream';
import pino from 'pino';
import { afterEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { createMonitorCore } from '../../src/daemon/monitorCore.js';
import { encodeLine } from '../../src/protocol/encodeLine.js';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { wireScript } from '../helpers/wireScript.js';

/**
 * What the monitor core tells the log (the service's journal): each state change with loop, from, to and
 * reason; a decoder's HELLO, its FAULTs and a loop count that does not match the config; going offline;
 * and every alarm action with its alarm id. The journal is where an installer looks first.
 */
const T0 = Date.UTC(2026, 0, 15, 2, 0, 0);
let tmp: TempDir | undefined;
let store: Store | undefined;
afterEach(() => {
  store?.close();
  tmp?.cleanup();
});

function start() {
  tmp = makeTempDir('pairwatch-corelog-');
  const records: Array<Record<string, unknown>> = [];
  const sink = new Writable({
    write(chunk: Buffer, _enc, done) {
      for (const line of chunk.toString('utf8').split('\n')) if (line.trim()) records.push(JSON.parse(line) as Record<string, unknown>);
      done();
    },
  });
  const logger = pino({ level: 'debug' }, sink);
  const config = parseConfig(`
site: { name: "Test Farm" }
decoders: [{ id: main, port: /dev/null, inputs: 3 }]
loops: [{ id: well-pit, name: "Well pit", decoder: main, input: 1 }, { id: barn, name: "Barn", decoder: main, input: 2 }]
contacts: [{ id: office, name: Office, email: office@example.org }]
mail: { from: "m <m@example.org>" }
storage: { path: ${join(tmp.dir, 'site.db')} }
`);
  let clock = T0;
  store = openStore({ path: join(tmp.dir, 'site.db') });
  const writer = createDurableWriter({ store, onFailing() {}, onRecovered() {}, now: () => clock });
  const core = createMonitorCore({ config, store, writer, logger, now: clock });
  const feed = (lines: Array<{ atUs: number; line: string }>) => {
    for (const { atUs, line } of lines) {
      clock = T0 + Math.round(atUs / 1000);
      core.line('main', line, clock);
    }
  };
  return { core, feed, records, at: () => clock, set: (ms: number) => (clock = ms) };
}

const byMsg = (records: Array<Record<string, unknown>>, pattern: RegExp) => records.filter((r) => typeof r.msg === 'string' && pattern.test(r.msg));

describe('monitor core journal', () => {
  it('logs HELLO with firmware and a loop-count mismatch, state changes with their reasons, and alarm actions', () => {
    const { core, feed, records } = start();
    core.linkStatus('main', { state: 'connected' }, T0);
    expect(byMsg(records, /^decoder main port open$/)).toHaveLength(1);
    feed(wireScript(2, { firmware: 'fw-9.1' }).hello(0).pulses(1, 100_000, 2_100_000).pulses(2, 100_000, 6_000_000).ticks(0, 4_000_000).build());

    const [hello] = byMsg(records, /^decoder main started \(HELLO, firmware fw-9\.1\)$/);
    expect(hello).toMatchObject({ level: 30, decoderId: 'main', firmware: 'fw-9.1', loops: 2 });
    const [mismatch] = byMsg(records, /^decoder main reports 2 loops but the config says inputs: 3$/);
    expect(mismatch).toMatchObject({ level: 40, decoderId: 'main', hello: 2, configured: 3 });

    const trip = byMsg(records, /^loop well-pit: healthy → tripped$/);
    expect(trip).toHaveLength(1);
    expect(trip[0]).toMatchObject({ level: 30, loopId: 'well-pit', from: 'healthy', to: 'tripped', reason: 'no valid pulse for 1500 ms' });
    expect(byMsg(records, /^loop barn: unknown → healthy$/)[0]).toMatchObject({ loopId: 'barn', from: 'unknown', to: 'healthy' });

    const raised = byMsg(records, /^alarm raise$/);
    expect(raised).toHaveLength(1);
    expect(raised[0]).toMatchObject({ level: 30, alarmId: 1, loopId: 'well-pit', action: 'raise', actor: 'system', note: 'alarm: tripped on well-pit' });
    const step = byMsg(records, /^alarm escalation-step$/);
    expect(step[0]).toMatchObject({ alarmId: 1, action: 'escalation-step' });
  });

  it('logs a FAULT frame, a garbled line at debug, going offline and talking again', () => {
    const { core, feed, records, at, set } = start();
    core.linkStatus('main', { state: 'connected' }, T0);
    feed(wireScript(2).hello(0).ticks(0, 400_000).build());
    core.line('main', encodeLine('FAULT 3 500000 SUPPLY').replace(/\n$/, ''), at());
    core.line('main', 'EDGE 4 600000 1 H*0000', at());
    const [fault] = byMsg(records, /^decoder main reported FAULT SUPPLY$/);
    expect(fault).toMatchObject({ level: 40, decoderId: 'main', code: 'SUPPLY' });
    const [dropped] = byMsg(records, /^dropped a line$/);
    expect(dropped).toMatchObject({ level: 20, reason: 'crc' });

    set(at() + 5000);
    core.tick(at());
    const [offline] = byMsg(records, /^decoder main offline: no valid line/);
    expect(offline).toMatchObject({ level: 40, decoderId: 'main' });
    feed(wireScript(2).hello(0).build().map((l) => ({ ...l, atUs: (at() - T0 + 10) * 1000 })));
    expect(byMsg(records, /^decoder main is talking again$/)[0]).toMatchObject({ level: 30, decoderId: 'main' });
  });
});

describe('monitor core: the minute roll-up', () => {
  it('raises link-noisy when a minute has 20+ bad frames and 10 %+ of them, clears it after a clean minute, and stores the counters', () => {
    const { core, feed, records, at, set } = start();
    core.linkStatus('main', { state: 'connected' }, T0);
    // 100 good TICKs and 25 garbled lines in the first minute: 25 / 125 = 20 % bad.
    const ticks = wireScript(2).hello(0).ticks(0, 19_800_000).build();
    for (const [i, { atUs, line }] of ticks.entries()) {
      feed([{ atUs, line }]);
      if (i > 0 && i <= 25) core.line('main', 'TICK 9 1 NN*0000', at());
    }
    set(T0 + 60_000);
    core.minute(at(), T0);
    expect(core.openAlarms().filter((a) => a.condition === 'link-noisy').map((a) => [a.source, a.priority])).toEqual([['main', 'trouble']]);
    expect(byMsg(records, /^decoder main link is noisy: 25 bad or lost frames in a minute$/)[0]).toMatchObject({ level: 40, bad: 25 });
    const session = store!.db.prepare('SELECT frames, bad_frames FROM decoder_sessions ORDER BY id DESC LIMIT 1').get() as { frames: number; bad_frames: number };
    expect(session).toEqual({ frames: ticks.length, bad_frames: 25 });

    // A clean minute: under 2 % bad, the trouble clears.
    feed(wireScript(2).ticks(60_000_000, 79_800_000).build().map((l, i) => ({ atUs: l.atUs, line: encodeLine(`TICK ${(ticks.length - 1 + i) % 65536} ${l.atUs} NN`).replace(/\n$/, '') })));
    set(T0 + 120_000);
    core.minute(at(), T0 + 60_000);
    expect(core.openAlarms().filter((a) => a.condition === 'link-noisy' && a.active)).toEqual([]);
  });

  it('counts a garbled line once, not again as the sequence gap it leaves', () => {
    const { core, feed, records, at, set } = start();
    core.linkStatus('main', { state: 'connected' }, T0);
    // Every fifth TICK garbled in transit: 20 garbled of 100 and the 20 seq gaps they leave are the same frames.
    const ticks = wireScript(2).hello(0).ticks(0, 19_800_000).build();
    for (const [i, l] of ticks.entries()) {
      if (i > 0 && i % 5 === 0) core.line('main', `${l.line.slice(0, -4)}0000`, at());
      else feed([l]);
    }
    set(T0 + 60_000);
    core.minute(at(), T0);
    // 20 bad of 100 lines is 20 %, with 20 bad frames: noisy. Counted twice it would read 40.
    expect(core.openAlarms().filter((a) => a.condition === 'link-noisy')).toHaveLength(1);
    // 81 good frames: the HELLO and 80 TICKs.
    expect(byMsg(records, /link is noisy/).map((r) => [r.bad, r.frames])).toEqual([[20, 81]]);
  });
});
