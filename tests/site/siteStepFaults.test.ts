import { describe, expect, it } from 'vitest';
import { DEFAULT_LOOP_SETTINGS } from '../../src/classify/loopSettings.js';
import { encodeLine } from '../../src/protocol/encodeLine.js';
import { indexSite, initialSiteState, stepSite } from '../../src/site/siteStep.js';
import type { SiteEffect, SiteState } from '../../src/site/siteTypes.js';

/**
 * The site step's own rules beyond one loop's classifier: a FAULT OVERRUN means edges were lost (enough
 * to hide a whole pulse, so the trip window gets the README rule 10 benefit of the doubt, at most half
 * a period), other FAULT codes do not; a new connection (link-up) starts a new session, so its first
 * sequence number is not a gap; decoder times are placed on the host clock by the latest frame.
 */
const HOST = Date.UTC(2026, 11, 1, 6, 0, 0);
const index = indexSite({ loops: [{ id: 'well-pit', decoderId: 'main', input: 1, settings: DEFAULT_LOOP_SETTINGS }], decoders: [{ id: 'main', silenceMs: 2000 }] });

type Item = { atUs: number; body: (seq: number) => string; counts: boolean };
/** A one-loop decoder: pulses at 100, 600, 1100, 1600 ms, TICKs every 200 ms to `untilUs`, plus `extra` frames. */
function lines(untilUs: number, extra: Item[] = []): Array<{ atUs: number; line: string }> {
  const items: Item[] = [{ atUs: 0, body: () => 'HELLO 1 1 t-1', counts: false }];
  let band = 'N';
  const edges: Array<[number, string]> = [];
  for (const start of [100_000, 600_000, 1_100_000, 1_600_000]) edges.push([start, 'H'], [start + 1000, 'N']);
  const all: Array<{ atUs: number; kind: 'edge' | 'tick' | 'extra'; band?: string; item?: Item }> = [
    ...edges.map(([atUs, b]) => ({ atUs, kind: 'edge' as const, band: b })),
    ...Array.from({ length: Math.floor(untilUs / 200_000) + 1 }, (_, i) => ({ atUs: i * 200_000, kind: 'tick' as const })),
    ...extra.map((item) => ({ atUs: item.atUs, kind: 'extra' as const, item })),
  ].sort((a, b) => a.atUs - b.atUs || (a.kind === 'edge' ? -1 : 1));
  for (const x of all) {
    if (x.kind === 'edge') {
      band = x.band!;
      const b = band;
      items.push({ atUs: x.atUs, body: (seq) => `EDGE ${seq} ${x.atUs} 1 ${b}`, counts: true });
    } else if (x.kind === 'tick') {
      const b = band;
      items.push({ atUs: x.atUs, body: (seq) => `TICK ${seq} ${x.atUs} ${b}`, counts: true });
    } else items.push(x.item!);
  }
  let seq = 0;
  return items.map((item) => {
    const line = encodeLine(item.body(seq)).replace(/\n$/, '');
    if (item.counts) seq += 1;
    return { atUs: item.atUs, line };
  });
}

function feed(input: Array<{ atUs: number; line: string }>, state: SiteState = initialSiteState(index.definition, HOST)) {
  const effects: SiteEffect[] = [];
  for (const { atUs, line } of input) {
    const step = stepSite(index, state, { kind: 'line', decoderId: 'main', line }, HOST + atUs / 1000);
    state = step.state;
    effects.push(...step.effects);
  }
  return { state, effects };
}
const changes = (effects: SiteEffect[]) => effects.flatMap((e) => (e.kind === 'loop' && e.effect.kind === 'state' ? [[e.effect.to, e.effect.atUs, e.atMs - HOST]] : []));
const fault = (atUs: number, code: string): Item => ({ atUs, body: (seq) => `FAULT ${seq} ${atUs} ${code}`, counts: true });

describe('site step: decoder faults and sessions', () => {
  it('without a fault the loop trips 1500 ms after its last pulse, dated on the host clock', () => {
    expect(changes(feed(lines(4_000_000)).effects)).toEqual([
      ['healthy', 1_101_000, 1101],
      ['tripped', 3_100_000, 3100],
    ]);
  });

  it('FAULT OVERRUN (edges lost) may have hidden a pulse: the trip moves on by at most half a period', () => {
    const { effects } = feed(lines(4_000_000, [fault(1_900_000, 'OVERRUN')]));
    expect(effects.filter((e) => e.kind === 'decoder' && e.event.kind === 'fault').map((e) => e.kind === 'decoder' && e.event.kind === 'fault' && [e.event.code, e.atMs - HOST])).toEqual([['OVERRUN', 1900]]);
    // Hidden pulse as late as 1900 − 0.2 ms, capped at 250 ms past the last real pulse (1600 ms): 3100 + 250.
    expect(changes(effects)).toEqual([
      ['healthy', 1_101_000, 1101],
      ['tripped', 3_350_000, 3350],
    ]);
  });

  it('FAULT SUPPLY is reported but hides nothing', () => {
    const { effects } = feed(lines(4_000_000, [fault(1_900_000, 'SUPPLY')]));
    expect(changes(effects)).toEqual([
      ['healthy', 1_101_000, 1101],
      ['tripped', 3_100_000, 3100],
    ]);
  });

  it('a new connection is a new session: its first seq is not a gap', () => {
    const first = feed(lines(1_000_000));
    const up = stepSite(index, first.state, { kind: 'link-up', decoderId: 'main' }, HOST + 1100);
    const step = stepSite(index, up.state, { kind: 'line', decoderId: 'main', line: encodeLine('TICK 500 1200000 N').replace(/\n$/, '') }, HOST + 1200);
    expect(step.effects.filter((e) => e.kind === 'decoder')).toEqual([]);
    const sameSession = stepSite(index, first.state, { kind: 'line', decoderId: 'main', line: encodeLine('TICK 500 1200000 N').replace(/\n$/, '') }, HOST + 1200);
    expect(sameSession.effects.filter((e) => e.kind === 'decoder').map((e) => e.kind === 'decoder' && e.event.kind)).toEqual(['lost']);
  });

  it('places decoder times on the host clock by the frame that revealed them', () => {
    // The same lines arriving 5 s late in host time: states keep their decoder times, host times move by 5 s.
    const late = lines(4_000_000).map((l) => ({ ...l, atUs: l.atUs + 5_000_000 }));
    const input = late.map(({ atUs, line }) => ({ atUs, line }));
    const { effects } = feed(input);
    expect(changes(effects)).toEqual([
      ['healthy', 1_101_000, 6101],
      ['tripped', 3_100_000, 8100],
    ]);
  });
});
