import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS } from '../../src/classify/index.js';
import { indexSite, initialSiteState, stepSite } from '../../src/site/siteStep.js';
import type { SiteEffect, SiteState } from '../../src/site/siteTypes.js';
import { wireScript } from '../helpers/wireScript.js';

// The decoder link as the site sees it: when a decoder counts as offline, what keeps it online, and
// that a step never changes the state it was handed. Host time is fake; lines come from the wire script helper.

const HOST_START = Date.UTC(2026, 11, 1, 6, 0, 0);
const index = indexSite({
  loops: [
    { id: 'well-pit', decoderId: 'main', input: 1, settings: DEFAULT_LOOP_SETTINGS },
    { id: 'pump-house', decoderId: 'main', input: 2, settings: DEFAULT_LOOP_SETTINGS },
    { id: 'barn', decoderId: 'yard', input: 1, settings: DEFAULT_LOOP_SETTINGS },
  ],
  // The yard decoder is on a slow radio link, so it is given longer before it counts as silent.
  decoders: [{ id: 'main', silenceMs: 2000 }, { id: 'yard', silenceMs: 5000 }],
});

function feed(decoderId: string, lines: Array<{ atUs: number; line: string }>, state: SiteState) {
  const effects: SiteEffect[] = [];
  for (const { atUs, line } of lines) {
    const step = stepSite(index, state, { kind: 'line', decoderId, line }, HOST_START + atUs / 1000);
    state = step.state;
    effects.push(...step.effects);
  }
  return { state, effects };
}

function bothSpeaking(untilUs: number): SiteState {
  let state = initialSiteState(index.definition, HOST_START);
  state = feed('main', wireScript(2).hello(0).pulses(1, 100_000, untilUs).pulses(2, 100_000, untilUs).ticks(200_000, untilUs).build(), state).state;
  return feed('yard', wireScript(1).hello(0).pulses(1, 100_000, untilUs).ticks(200_000, untilUs).build(), state).state;
}

const offlineOf = (effects: SiteEffect[]) => effects.flatMap((e) => (e.kind === 'decoder-offline' ? [[e.decoderId, e.reason]] : []));

describe('decoder silence', () => {
  it('each decoder has its own silence time, and the reason says how long it was quiet', () => {
    const state = bothSpeaking(2_000_000);
    // 2.5 s after the last lines: main (2 s) is offline, yard (5 s) is not yet.
    const at25 = stepSite(index, state, { kind: 'clock' }, HOST_START + 4500);
    expect(offlineOf(at25.effects)).toEqual([['main', 'no valid line for 2.5 s']]);
    const at5 = stepSite(index, at25.state, { kind: 'clock' }, HOST_START + 7000);
    expect(offlineOf(at5.effects)).toEqual([['yard', 'no valid line for 5 s']]);
  });

  it('an offline decoder is reported once, however long the silence lasts or however often the link drops', () => {
    const state = bothSpeaking(2_000_000);
    const off = stepSite(index, state, { kind: 'clock' }, HOST_START + 4500).state;
    expect(offlineOf(stepSite(index, off, { kind: 'clock' }, HOST_START + 6000).effects)).toEqual([]);
    expect(stepSite(index, off, { kind: 'link-down', decoderId: 'main', reason: 'device removed' }, HOST_START + 6000).effects).toEqual([]);
  });

  it('garbled lines alone do not keep a decoder online', () => {
    let state = bothSpeaking(2_000_000);
    for (const at of [2500, 3000, 3500, 3900]) {
      state = stepSite(index, state, { kind: 'line', decoderId: 'main', line: '\u0000garbage\u00ff' }, HOST_START + at).state;
    }
    expect(offlineOf(stepSite(index, state, { kind: 'clock' }, HOST_START + 4000).effects)).toEqual([['main', 'no valid line for 2 s']]);
  });

  it('lines, link changes and silence for a decoder the site does not have are ignored', () => {
    const state = bothSpeaking(1_000_000);
    const line = wireScript(1).hello(0).build()[0]!.line;
    for (const input of [
      { kind: 'line', decoderId: 'attic', line },
      { kind: 'link-down', decoderId: 'attic', reason: 'gone' },
      { kind: 'link-up', decoderId: 'attic' },
    ] as const) {
      const step = stepSite(index, state, input, HOST_START + 1100);
      expect(step.effects).toEqual([]);
      expect(step.state.decoders).toEqual(state.decoders);
    }
  });

  it('a link going down on one decoder leaves the other decoder\'s loops alone', () => {
    const state = bothSpeaking(2_000_000);
    const step = stepSite(index, state, { kind: 'link-down', decoderId: 'yard', reason: 'device removed' }, HOST_START + 2100);
    const loopsTouched = step.effects.flatMap((e) => (e.kind === 'loop' ? [e.loopId] : []));
    expect(loopsTouched).toEqual(['barn']);
    expect(step.state.decoders['main']!.offline).toBe(false);
  });
});

describe('a step never changes what it was handed', () => {
  it('the state passed in reads the same after steps that change loops, decoders and holds', () => {
    const state = bothSpeaking(2_000_000);
    const before = structuredClone(state);
    stepSite(index, state, { kind: 'clock' }, HOST_START + 9000); // both offline, every loop changes
    stepSite(index, state, { kind: 'link-down', decoderId: 'main', reason: 'device removed' }, HOST_START + 2100);
    stepSite(index, state, { kind: 'link-up', decoderId: 'main' }, HOST_START + 2100);
    feed('main', wireScript(2).edge(2_100_000, 1, 'O').ticks(2_200_000, 2_600_000).build(), state);
    expect(state).toEqual(before);
  });
});
