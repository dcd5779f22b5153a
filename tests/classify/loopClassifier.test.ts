import { describe, expect, it } from 'vitest';
import { currentLoopState, DEFAULT_LOOP_SETTINGS, initialLoopClassifier, lastPulseUs } from '../../src/classify/loopClassifierState.js';
import { stepLoop, type LoopInput } from '../../src/classify/loopClassifier.js';
import { takeQuality } from '../../src/classify/lineQuality.js';
import {
  changes, classify, edge, heartbeat, lost, pulseAt, pulseEffects, pulsesAt, seededRandom, tick, timeOf, us, withTicks,
} from './loopScript.js';

/*
 * Expected times follow from the defaults the specification (issue 2, "Loop classification") gives:
 * heartbeat every 500 ms, pulse 0.2–20 ms, short and open after 200 ms, trip after 1500 ms without a
 * valid pulse, healthy after 3 pulses with intervals within 0.5–1.5 periods, intermittent after 3
 * fault entries in 10 minutes. Each expectation is worked out by hand from those numbers and the
 * scenario's own times, never read back from the classifier.
 */

describe('stepLoop: each state reached and left at the exact decoder time', () => {
  it('goes unknown → healthy at the end of the third pulse, trips 1500 ms after the last, recovers after three more', () => {
    const edges = [edge('N', 0), ...heartbeat(100, 3), ...heartbeat(4000, 3)];
    const { effects } = classify(withTicks(edges, 5500));
    expect(changes(effects)).toEqual([
      ['healthy', us(1101)], // third pulse 1100–1101 ms
      ['tripped', us(2600)], // last pulse started at 1100 ms, + 1500 ms; revealed by the TICK at 2750 ms
      ['healthy', us(5001)], // pulses at 4000, 4500, 5000 ms
    ]);
    const trip = effects.find((e) => e.kind === 'state' && e.to === 'tripped');
    expect(trip).toMatchObject({ from: 'healthy', reason: 'no valid pulse for 1500 ms' });
  });

  it('trips 1500 ms after the first input when no pulse ever comes', () => {
    expect(changes(classify(withTicks([edge('N', 40)], 2000)).effects)).toEqual([['tripped', us(1540)]]);
    expect(changes(classify(withTicks([tick('N', 0)], 2000)).effects)).toEqual([['tripped', us(1500)]]);
  });

  it('reports open 200 ms after the band falls to O and needs three pulses to return to normal', () => {
    const edges = [edge('N', 0), ...heartbeat(100, 3), edge('O', 1200), edge('N', 3000), ...heartbeat(3300, 3)];
    expect(changes(classify(withTicks(edges, 5000)).effects)).toEqual([
      ['healthy', us(1101)],
      ['open', us(1400)], // revealed by the TICK at 1500 ms
      ['healthy', us(4301)],
    ]);
  });

  it('gives a repaired loop a full trip window from the repair before calling it tripped', () => {
    const edges = [edge('N', 0), ...heartbeat(100, 3), edge('O', 1200), edge('N', 3000)];
    expect(changes(classify(withTicks(edges, 5000)).effects)).toEqual([
      ['healthy', us(1101)],
      ['open', us(1400)],
      ['tripped', us(4500)], // repair at 3000 ms + 1500 ms
    ]);
  });

  it('after a repair, measures the trip window from the last valid pulse again once one comes', () => {
    const edges = [edge('N', 0), ...heartbeat(100, 3), edge('O', 1200), edge('N', 3000), ...pulseAt(3300)];
    expect(changes(classify(withTicks(edges, 5500)).effects)).toEqual([
      ['healthy', us(1101)],
      ['open', us(1400)],
      ['tripped', us(4800)], // the lone pulse at 3300 ms + 1500 ms
    ]);
  });

  it('reports shorted 200 ms after the band rises to H, then recovers', () => {
    const edges = [edge('N', 0), ...heartbeat(100, 3), edge('H', 1200), edge('N', 2000), ...heartbeat(2300, 3)];
    const { state, effects } = classify(withTicks(edges, 4000));
    expect(changes(effects)).toEqual([
      ['healthy', us(1101)],
      ['shorted', us(1400)],
      ['healthy', us(3301)],
    ]);
    // The short is not also booked as a long pulse.
    expect(takeQuality(state).quality).toMatchObject({ pulses: 6, longPulses: 0, glitches: 0 });
  });

  it('dates a short by its window even when the revealing frame comes 240 ms later', () => {
    const inputs: LoopInput[] = [edge('N', 0), ...heartbeat(100, 3), edge('H', 1260), tick('H', 1500), tick('H', 1700)];
    expect(changes(classify(inputs).effects)).toEqual([['healthy', us(1101)], ['shorted', us(1460)]]);
  });

  it('goes from shorted to tripped when the short clears but the node stays silent', () => {
    const edges = [edge('N', 0), ...heartbeat(100, 3), edge('H', 1200), edge('N', 2000)];
    expect(changes(classify(withTicks(edges, 4000)).effects)).toEqual([
      ['healthy', us(1101)],
      ['shorted', us(1400)],
      ['tripped', us(3500)],
    ]);
  });
});

describe('stepLoop: what counts as a heartbeat pulse', () => {
  it('accepts widths of exactly 0.2 ms and 20 ms', () => {
    const inputs = [edge('N', 0), ...pulseAt(100, 0.2), ...pulseAt(600, 20), ...pulseAt(1100, 0.2)];
    const { effects } = classify(inputs);
    expect(pulseEffects(effects).map((p) => p.widthUs)).toEqual([200, 20_000, 200]);
    expect(changes(effects)).toEqual([['healthy', 1_100_200]]);
  });

  it('counts a 0.199 ms span as a glitch and a 20.001 ms span as a long pulse; neither keeps the loop alive', () => {
    const invalid = [100, 600, 1100, 1600].flatMap((t, i) => pulseAt(t, i % 2 === 0 ? 0.199 : 20.001));
    const { state, effects } = classify(withTicks([edge('N', 0), ...invalid], 2000));
    expect(pulseEffects(effects)).toEqual([]);
    expect(changes(effects)).toEqual([['tripped', us(1500)]]);
    expect(takeQuality(state).quality).toMatchObject({ pulses: 0, glitches: 2, longPulses: 2 });
  });

  it('does not trip when a valid pulse starts just before the window ends', () => {
    const inputs = [edge('N', 0), ...heartbeat(100, 3), ...pulseAt(2599.5)];
    const { state, effects } = classify(withTicks(inputs, 4500));
    // The trip window restarts at 2599.5 ms: tripped at 4099.5 ms.
    expect(changes(effects)).toEqual([['healthy', us(1101)], ['tripped', 4_099_500]]);
    expect(lastPulseUs(state)).toBe(2_599_500);
  });

  it('trips at the exact window end when a long pulse straddles it', () => {
    const inputs = [edge('N', 0), ...heartbeat(100, 3), ...pulseAt(2599.5, 30)];
    expect(changes(classify(inputs).effects)).toEqual([['healthy', us(1101)], ['tripped', us(2600)]]);
  });
});

describe('stepLoop: tolerance while healthy', () => {
  it('stays healthy with interval jitter of ±20 % (seeded random intervals of 400–600 ms)', () => {
    const random = seededRandom(20240101);
    const starts: number[] = [100];
    for (let i = 1; i < 400; i++) starts.push(starts[i - 1]! + 400 + Math.round(random() * 200));
    const end = starts[starts.length - 1]! + 1;
    const { state, effects } = classify(withTicks([edge('N', 0), ...pulsesAt(starts)], end));
    expect(changes(effects)).toEqual([['healthy', us(starts[2]! + 1)]]);
    expect(takeQuality(state).quality).toMatchObject({ pulses: 400, intervalCount: 399, outOfTolerance: 0 });
  });

  it('stays healthy at the jitter extremes, intervals alternating 400 ms and 600 ms', () => {
    const starts = Array.from({ length: 40 }, (_, i) => 100 + i * 500 + (i % 2 === 0 ? 0 : -100));
    const { state, effects } = classify(withTicks([edge('N', 0), ...pulsesAt(starts)], 20_000));
    expect(changes(effects)).toEqual([['healthy', us(1101)]]); // pulses at 100, 500, 1100 ms
    expect(takeQuality(state).quality).toMatchObject({ intervalCount: 39, outOfTolerance: 0 });
  });

  it('stays healthy over one lost pulse and only counts the long interval', () => {
    const starts = Array.from({ length: 20 }, (_, i) => 100 + i * 500).filter((_, i) => i !== 5);
    const { state, effects } = classify(withTicks([edge('N', 0), ...pulsesAt(starts)], 9700));
    expect(changes(effects)).toEqual([['healthy', us(1101)]]);
    expect(pulseEffects(effects).map((p) => p.intervalUs)).toContain(us(1000));
    expect(takeQuality(state).quality.outOfTolerance).toBe(1);
  });

  it('stays healthy over two lost pulses: the next one starts exactly at the deadline (3 periods), in time', () => {
    // Pulses every 500 ms from 100 ms, the 6th and 7th (2600, 3100 ms) missing: last pulse 2100 ms, and
    // the next, at 3600 ms, starts at 2100 + 1500 ms — the very instant the window runs out. The node
    // has the whole window, that instant included (src/classify/tripDeadline.ts).
    const starts = Array.from({ length: 12 }, (_, i) => 100 + i * 500).filter((_, i) => i !== 5 && i !== 6);
    const { state, effects } = classify(withTicks([edge('N', 0), ...pulsesAt(starts)], 5750));
    expect(changes(effects)).toEqual([['healthy', us(1101)]]);
    expect(pulseEffects(effects).map((p) => p.intervalUs)).toContain(us(1500));
    expect(takeQuality(state).quality.outOfTolerance).toBe(1);
  });

  it('trips after three lost pulses, 1500 ms after the last, then recovers', () => {
    const starts = Array.from({ length: 12 }, (_, i) => 100 + i * 500).filter((_, i) => i < 5 || i > 7);
    expect(changes(classify(withTicks([edge('N', 0), ...pulsesAt(starts)], 5750)).effects)).toEqual([
      ['healthy', us(1101)],
      ['tripped', us(3600)], // last pulse 2100 ms + 1500 ms; revealed by the TICK at 3750 ms
      ['healthy', us(5101)], // three fresh pulses: 4100, 4600, 5100 ms
    ]);
  });
});

describe('stepLoop: lost frames, TICK resync, restart, offline', () => {
  it('does not trust an interval across frames lost that could have hidden a pulse', () => {
    // Two frames are enough for a whole pulse (its H and its N EDGE).
    const inputs = [edge('N', 0), ...heartbeat(100, 2), lost(2, 700), ...heartbeat(1100, 3)];
    const { state, effects } = classify(inputs);
    expect(changes(effects)).toEqual([['healthy', us(2101)]]); // 1100, 1600, 2100 ms form the chain
    expect(pulseEffects(effects).map((p) => p.intervalUs)).toEqual([null, us(500), null, us(500), us(500)]);
    expect(takeQuality(state).quality.lostFrames).toBe(2);
  });

  it('keeps the pulse chain over a single frame lost while at N (it cannot hide a whole pulse)', () => {
    // Had the lost frame been this loop's H EDGE, its N EDGE would arrive into N and break the chain then.
    const inputs = [edge('N', 0), ...heartbeat(100, 2), lost(1, 700), ...heartbeat(1100, 3)];
    const { state, effects } = classify(inputs);
    expect(changes(effects)).toEqual([['healthy', us(1101)]]); // 100, 600, 1100 ms
    expect(pulseEffects(effects).map((p) => p.intervalUs)).toEqual([null, us(500), us(500), us(500), us(500)]);
    expect(takeQuality(state).quality.lostFrames).toBe(1);
  });

  it('breaks the chain when an EDGE into N shows that the H EDGE before it was lost', () => {
    const inputs = [edge('N', 0), ...heartbeat(100, 2), lost(1, 1101), edge('N', 1101), ...heartbeat(1600, 3)];
    const { effects } = classify(inputs);
    // 100, 600 ms, then the pulse at 1100 ms is seen only by its N EDGE: 1600, 2100, 2600 ms form the chain.
    expect(changes(effects)).toEqual([['healthy', us(2601)]]);
    expect(pulseEffects(effects).map((p) => p.intervalUs)).toEqual([null, us(500), null, us(500), us(500)]);
  });

  it('adopts the band a TICK reports after the edge was lost, at the TICK time', () => {
    const head = withTicks([edge('N', 0), ...heartbeat(100, 3)], 1250);
    const inputs = [...head, lost(2, 1500), tick('O', 1500), tick('O', 1750), tick('O', 2000)];
    const { state, effects } = classify(inputs);
    expect(changes(effects)).toEqual([['healthy', us(1101)], ['open', us(1700)]]);
    expect(takeQuality(state).quality).toMatchObject({ lostFrames: 2, pulses: 3, glitches: 0 });
  });

  it('invents neither a pulse nor a short when a TICK shows the end of an H span was lost', () => {
    const head = withTicks([edge('N', 0), ...heartbeat(100, 3)], 1500);
    const inputs = [...head, edge('H', 1600), lost(1, 1750), tick('N', 1750), ...withTicks(heartbeat(2100, 4), 4000).filter((i) => timeOf(i) > us(1750))];
    const { state, effects } = classify(inputs);
    expect(changes(effects)).toEqual([['healthy', us(1101)]]);
    expect(pulseEffects(effects).map((p) => p.atUs)).not.toContain(us(1600));
    // The pulse after the resync has no interval: the chain broke with the lost frame.
    expect(pulseEffects(effects).find((p) => p.atUs === us(2100))?.intervalUs).toBeNull();
    expect(takeQuality(state).quality).toMatchObject({ pulses: 7, glitches: 0, longPulses: 0, lostFrames: 1 });
  });

  it('starts over on a decoder restart: unknown, history forgotten, quality kept', () => {
    const before = classify(withTicks([edge('N', 0), ...heartbeat(100, 4)], 1750));
    const restarted = stepLoop(before.state, { kind: 'restart' }, DEFAULT_LOOP_SETTINGS);
    expect(restarted.effects).toEqual([
      // Dated by the last decoder time heard before the restart (the TICK at 1750 ms).
      { kind: 'state', from: 'healthy', to: 'unknown', atUs: us(1750), reason: 'decoder restarted: classification starts over' },
    ]);
    expect(lastPulseUs(restarted.state)).toBeNull();
    // Had the pulse at 1600 ms been remembered, 2100 ms would continue its chain and heal at 2101 ms.
    const after = classify([edge('N', 1800), ...heartbeat(2100, 3)], DEFAULT_LOOP_SETTINGS, restarted.state);
    expect(changes(after.effects)).toEqual([['healthy', us(3101)]]);
    expect(takeQuality(after.state).quality.pulses).toBe(4 + 3);
  });

  it('after a restart measures the trip window from the first input, not the old last pulse', () => {
    const before = classify(withTicks([edge('N', 0), ...heartbeat(100, 4)], 1750));
    const restarted = stepLoop(before.state, { kind: 'restart' }, DEFAULT_LOOP_SETTINGS).state;
    const ticks = Array.from({ length: 10 }, (_, i) => tick('N', 1800 + i * 250));
    const after = classify(ticks, DEFAULT_LOOP_SETTINGS, restarted);
    expect(changes(after.effects)).toEqual([['tripped', us(3300)]]);
  });

  it('goes offline, and starts over from unknown when the decoder is heard again', () => {
    const before = classify(withTicks([edge('N', 0), ...heartbeat(100, 3)], 1250));
    const off = stepLoop(before.state, { kind: 'offline' }, DEFAULT_LOOP_SETTINGS);
    expect(off.effects).toEqual([
      { kind: 'state', from: 'healthy', to: 'offline', atUs: us(1250), reason: 'decoder silent or its port is gone' },
    ]);
    expect(stepLoop(off.state, { kind: 'offline' }, DEFAULT_LOOP_SETTINGS).effects).toEqual([]);
    const stillOff = stepLoop(off.state, lost(3, 2000), DEFAULT_LOOP_SETTINGS).state;
    expect(currentLoopState(stillOff)).toBe('offline');
    const back = classify([tick('N', 5000), ...heartbeat(5100, 3)], DEFAULT_LOOP_SETTINGS, stillOff);
    expect(changes(back.effects)).toEqual([['unknown', us(5000)], ['healthy', us(6101)]]);
  });
});

describe('stepLoop: intermittent', () => {
  // A steady heartbeat with the cable cut for 800 ms three times, a minute apart.
  const cuts = [30_050, 90_050, 150_050];
  const starts = Array.from({ length: 1520 }, (_, i) => 100 + i * 500).filter(
    (t) => !cuts.some((c) => t >= c && t <= c + 800),
  );
  const cutEdges = (upToMs: number) =>
    [edge('N', 0), ...pulsesAt(starts.filter((t) => t < upToMs)), ...cuts.flatMap((c) => [edge('O', c), edge('N', c + 800)])]
      .sort((a, b) => timeOf(a) - timeOf(b));

  it('raises intermittent on the third fault entry within 10 minutes and drops it after 10 healthy minutes', () => {
    const { effects } = classify(withTicks(cutEdges(760_000), 760_000));
    expect(changes(effects).map(([to]) => to)).toEqual(['healthy', 'open', 'healthy', 'open', 'healthy', 'open', 'healthy']);
    expect(effects.filter((e) => e.kind === 'intermittent')).toEqual([
      { kind: 'intermittent', on: true, atUs: us(150_250), faultsInWindow: 3 }, // third open, 200 ms into the cut
      // healthy again at 152 101 ms (pulses 151 100, 151 600, 152 100), + 600 000 ms
      { kind: 'intermittent', on: false, atUs: us(752_101), faultsInWindow: 0 },
    ]);
  });

  it('orders by time the several things one late frame reveals', () => {
    // Heartbeat stops after the pulse at 751 600 ms; the next frame is an edge at 760 000 ms.
    const inputs = withTicks(cutEdges(751_700), 751_700);
    const { effects } = classify([...inputs, edge('O', 760_000), tick('O', 760_250)]);
    const tail = effects.filter((e) => e.atUs > us(752_000) && e.kind !== 'pulse');
    expect(tail.map((e) => [e.kind === 'state' ? e.to : `intermittent:${String(e.kind === 'intermittent' && e.on)}`, e.atUs])).toEqual([
      ['intermittent:false', us(752_101)],
      ['tripped', us(753_100)], // 751 600 + 1500 ms
      ['open', us(760_200)],
    ]);
  });
});

describe('stepLoop: purity', () => {
  it('never changes the state it was given', () => {
    const start = classify(withTicks([edge('N', 0), ...heartbeat(100, 3)], 1250)).state;
    const snapshot = structuredClone(start);
    stepLoop(start, edge('O', 1300), DEFAULT_LOOP_SETTINGS);
    stepLoop(start, { kind: 'restart' }, DEFAULT_LOOP_SETTINGS);
    stepLoop(start, lost(4, 1300), DEFAULT_LOOP_SETTINGS);
    expect(start).toEqual(snapshot);
    expect(initialLoopClassifier()).toEqual(initialLoopClassifier());
  });

  it('never changes the line-quality counters of the state it was given, whichever counter a step bumps', () => {
    // Mid-pulse: the EDGE back to N books a valid pulse (1 ms), a glitch (0.1 ms) or a long pulse (50 ms).
    const midPulse = classify([edge('N', 0), ...heartbeat(100, 3), edge('H', 1600)]).state;
    const snapshot = structuredClone(midPulse);
    const steps = [edge('N', 1601), edge('N', 1600.1), edge('N', 1650)].map((input) => stepLoop(midPulse, input, DEFAULT_LOOP_SETTINGS));
    expect(midPulse).toEqual(snapshot);
    expect(steps.map((step) => takeQuality(step.state).quality)).toMatchObject([
      { pulses: 4, glitches: 0, longPulses: 0 },
      { pulses: 3, glitches: 1, longPulses: 0 },
      { pulses: 3, glitches: 0, longPulses: 1 },
    ]);
    // A quiet TICK changes no counter; its state must still be its own to change later.
    const quiet = stepLoop(snapshot, tick('H', 1600.5), DEFAULT_LOOP_SETTINGS).state;
    stepLoop(quiet, edge('N', 1601), DEFAULT_LOOP_SETTINGS);
    expect(snapshot).toEqual(structuredClone(midPulse));
  });
});

/*
 * README "Classification rules, exactly", at the points the 13:15 mutation run found untested. Each
 * expected time is worked out by hand from the default settings, as above.
 */
describe('stepLoop: rules 3, 5 and 6 at their edges, and inputs that change nothing', () => {
  it('a loss of no frames hides nothing: the pulse around it still counts (rule 10 needs a gap)', () => {
    const inputs = [edge('N', 0), edge('H', 100), lost(0, 100.5), edge('N', 101), ...pulsesAt([600, 1100])];
    expect(changes(classify(inputs).effects)).toEqual([['healthy', us(1101)]]);
  });

  it('two frames lost at N forget the previous pulse (rule 3): the next pulse has no interval and counts from 1', () => {
    const inputs = [edge('N', 0), ...pulsesAt([100, 600]), lost(2, 900), ...pulsesAt([1100, 1600, 2100])];
    const { effects } = classify(inputs);
    expect(pulseEffects(effects).map((p) => p.intervalUs)).toEqual([null, us(500), null, us(500), us(500)]);
    expect(changes(effects)).toEqual([['healthy', us(2101)]]);
  });

  it('one frame lost during an H span breaks the chain too: the span cannot be judged, nor the interval across it', () => {
    const inputs = [edge('N', 0), ...pulsesAt([100, 600]), edge('H', 1100), lost(1, 1100.5), edge('N', 1101), ...pulsesAt([1600])];
    expect(pulseEffects(classify(inputs).effects).map((p) => [p.atUs, p.intervalUs])).toEqual([[us(100), null], [us(600), us(500)], [us(1600), null]]);
  });

  it('an O span is open at its start + 200 ms even when the trip deadline falls inside it (rules 5 and 6)', () => {
    // Healthy at 1101 ms; last pulse 1100 ms, so the trip deadline is 2600 ms, 100 ms into the O span from 2500 ms.
    const inputs = [edge('N', 0), ...pulsesAt([100, 600, 1100]), edge('O', 2500), tick('O', 2750), tick('O', 3000)];
    expect(changes(classify(inputs).effects)).toEqual([['healthy', us(1101)], ['open', us(2700)]]);
  });

  it('an EDGE stamped before the last frame is taken at the last frame\'s time (decoder time never runs backwards)', () => {
    const inputs = [tick('N', 1000), edge('O', 900), tick('O', 1150), tick('O', 1250)];
    expect(changes(classify(inputs).effects)).toEqual([['open', us(1200)]]);
  });

  it('a band input with a time that is not a number, or a band that is not O, N or H, changes nothing', () => {
    const before = classify([edge('N', 0), ...pulsesAt([100, 600])]).state;
    for (const input of [{ kind: 'band', band: 'H', atUs: Number.NaN }, { kind: 'sync', band: 'X', atUs: us(700) }] as unknown as LoopInput[]) {
      const step = stepLoop(before, input, DEFAULT_LOOP_SETTINGS);
      expect(step.effects).toEqual([]);
      expect(step.state).toEqual(before);
    }
  });
});

describe('stepLoop: what is not a valid pulse (README rule 2) and a TICK revealing a change (rule 3)', () => {
  it('H spans that left O rather than N are no heartbeat, however well timed: glitches', () => {
    const inputs = [edge('O', 0), ...[100, 600, 1100].flatMap((t) => [edge('H', t), edge('N', t + 1), edge('O', t + 2)])];
    const { effects, state } = classify(inputs);
    expect(pulseEffects(effects)).toEqual([]);
    expect(changes(effects).some(([to]) => to === 'healthy')).toBe(false);
    expect(takeQuality(state).quality).toMatchObject({ glitches: 3, longPulses: 0 });
  });

  it('an H span whose end only a TICK showed is no valid pulse (both ends must be EDGEs)', () => {
    const inputs = [edge('N', 0), ...[100, 600, 1100, 1600].flatMap((t) => [edge('H', t), tick('N', t + 1)])];
    const { effects } = classify(inputs);
    expect(pulseEffects(effects)).toEqual([]);
    expect(changes(effects).some(([to]) => to === 'healthy')).toBe(false);
  });

  it('a span not judged as a pulse is a glitch up to pulse_max (20 ms) and a long pulse beyond', () => {
    const at = (widthMs: number) => takeQuality(classify([edge('O', 0), edge('H', 100), edge('N', 100 + widthMs)]).state).quality;
    expect(at(20)).toMatchObject({ glitches: 1, longPulses: 0 });
    expect(at(20.001)).toMatchObject({ glitches: 0, longPulses: 1 });
  });

  it('a TICK showing another band forgets the previous pulse: the next one has no interval', () => {
    const inputs = [edge('N', 0), ...pulsesAt([100, 600]), tick('H', 1100.5), edge('N', 1101), ...pulsesAt([1600])];
    expect(pulseEffects(classify(inputs).effects).map((p) => p.intervalUs)).toEqual([null, us(500), null]);
  });
});
