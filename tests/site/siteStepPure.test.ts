import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS } from '../../src/classify/index.js';
import { sealBody } from '../../src/protocol/encodeLine.js';
import { indexSite, initialSiteState, stepSite } from '../../src/site/siteStep.js';
import type { SiteInput, SiteState } from '../../src/site/siteTypes.js';
import { wireScript } from '../helpers/wireScript.js';

/**
 * stepSite copies in, changes its private copy and hands it back: the state it is given is never
 * written (siteStep.ts). Each state is deep-frozen before it is stepped, so any write to it throws
 * (ES modules run in strict mode), and it is also compared with a snapshot taken before the step.
 * The inputs go through every path that changes state: lines (HELLO, pulses, TICKs, a garbled line,
 * lost frames), every loop tripping at once (the hold and its release), a clock that finds the
 * decoder silent, the link going down and up, and a frame stamped far ahead of the host's clock.
 */

const HOST = Date.UTC(2026, 11, 1, 6, 0, 0);

function deepFreeze<T>(value: T): T {
  if (value !== null && typeof value === 'object' && !Object.isFrozen(value)) {
    Object.freeze(value);
    for (const inner of Object.values(value as Record<string, unknown>)) deepFreeze(inner);
  }
  return value;
}

describe('stepSite never writes the state it is given', () => {
  it('holds across lines, a mass trip, silence, a link change and a clock far ahead', () => {
    const index = indexSite({
      loops: [
        { id: 'well-pit', decoderId: 'main', input: 1, settings: DEFAULT_LOOP_SETTINGS },
        { id: 'pump-house', decoderId: 'main', input: 2, settings: DEFAULT_LOOP_SETTINGS },
      ],
      decoders: [{ id: 'main', silenceMs: 2000 }],
      decoderClockAheadMs: 2000,
    });
    // Both loops healthy, then both stop pulsing: tripped together at 4100 ms, held, released as one at 5200 ms.
    const lines = wireScript(2).hello(0).pulses(1, 100_000, 3_000_000).pulses(2, 100_000, 3_000_000).ticks(0, 6_000_000).build();
    const inputs: Array<{ hostMs: number; input: SiteInput }> = lines.map(({ atUs, line }) => ({ hostMs: atUs / 1000, input: { kind: 'line', decoderId: 'main', line } }));
    // A seq gap (lost frames), a garbled line, silence, the link down and up, and a frame 10 s ahead of the host.
    inputs.splice(20, 0, { hostMs: inputs[20]!.hostMs, input: { kind: 'line', decoderId: 'main', line: 'EDGE 9000 1 1 H*0000' } });
    inputs.push(
      { hostMs: 6_100, input: { kind: 'line', decoderId: 'main', line: sealBody('TICK 30000 6100000 NN') } },
      { hostMs: 9_000, input: { kind: 'clock' } },
      { hostMs: 9_100, input: { kind: 'link-down', decoderId: 'main', reason: 'device removed' } },
      { hostMs: 9_200, input: { kind: 'link-up', decoderId: 'main' } },
      ...wireScript(2).hello(0).ticks(0, 400_000).build().map(({ atUs, line }) => ({ hostMs: 9_300 + atUs / 1000, input: { kind: 'line' as const, decoderId: 'main', line } })),
      ...wireScript(2, { timeOffsetUs: 20_000_000 }).ticks(600_000, 600_000).build().map(({ line }) => ({ hostMs: 9_800, input: { kind: 'line' as const, decoderId: 'main', line } })),
    );

    let state: SiteState = initialSiteState(index.definition, HOST);
    const kinds = new Set<string>();
    for (const { hostMs, input } of inputs) {
      const before = structuredClone(state);
      deepFreeze(state);
      const step = stepSite(index, state, input, HOST + hostMs);
      expect(state).toEqual(before);
      for (const effect of step.effects) kinds.add(effect.kind === 'decoder' ? `decoder ${effect.event.kind}` : effect.kind);
      state = step.state;
    }
    // The paths above were really taken (else the test would prove nothing about them).
    expect([...kinds].sort()).toEqual(['decoder dropped', 'decoder hello', 'decoder lost', 'decoder-clock', 'decoder-mass-trip', 'decoder-offline', 'decoder-online', 'edge', 'loop']);
  });
});
