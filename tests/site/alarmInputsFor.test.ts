import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { alarmInputsFor, loopsById } from '../../src/site/alarmInputsFor.js';
import type { SiteEffect } from '../../src/site/siteTypes.js';
import type { LoopState } from '../../src/model/loopState.js';

const config = parseConfig(`
site: { name: T }
decoders: [{ id: main, port: /dev/ttyACM0 }]
loops:
  - { id: well-pit, name: W, decoder: main, input: 1 }
  - { id: store, name: S, decoder: main, input: 2, latch_alarms: false, latch_trouble: true, escalation: night, trouble_escalation: wiring }
contacts: [{ id: office, name: O, email: o@example.org }]
escalation:
  night: { steps: [{ after: 0m, notify: [office] }] }
  wiring: { steps: [{ after: 0m, notify: [office] }] }
storage: { path: x.db }
`);
const loops = loopsById(config);
const change = (loopId: string, from: LoopState, to: LoopState): SiteEffect => ({ kind: 'loop', loopId, atMs: 0, effect: { kind: 'state', from, to, atUs: 0, reason: 'test' } });

describe('site effects to alarm inputs', () => {
  it('raises tripped as a latched alarm and trouble unlatched, by the loop settings', () => {
    expect(alarmInputsFor(loops, change('well-pit', 'healthy', 'tripped'), new Set())).toEqual([
      { kind: 'raise', source: 'well-pit', loopId: 'well-pit', condition: 'tripped', latched: true, policy: 'default' },
    ]);
    expect(alarmInputsFor(loops, change('store', 'healthy', 'open'), new Set())).toEqual([
      { kind: 'raise', source: 'store', loopId: 'store', condition: 'open', latched: true, policy: 'wiring' },
    ]);
    expect(alarmInputsFor(loops, change('store', 'healthy', 'tripped'), new Set())[0]).toMatchObject({ latched: false, policy: 'night' });
  });

  it('clears on return to healthy, including conditions from before a restart', () => {
    const inputs = alarmInputsFor(loops, change('well-pit', 'unknown', 'healthy'), new Set());
    expect(inputs).toEqual(['tripped', 'open', 'shorted'].map((condition) => ({ kind: 'clear', source: 'well-pit', condition })));
  });

  it('never clears a fault because the loop went blind (offline or unknown)', () => {
    expect(alarmInputsFor(loops, change('well-pit', 'tripped', 'offline'), new Set())).toEqual([]);
    expect(alarmInputsFor(loops, change('well-pit', 'open', 'unknown'), new Set())).toEqual([]);
  });

  it('moves a fault to the next one, and reports a flapping loop once as intermittent', () => {
    expect(alarmInputsFor(loops, change('well-pit', 'open', 'tripped'), new Set()).map((i) => [i.kind, 'condition' in i ? i.condition : null])).toEqual([
      ['clear', 'open'],
      ['raise', 'tripped'],
    ]);
    // While flagged intermittent, open/short flaps are not raised again; a tripped alarm still is.
    expect(alarmInputsFor(loops, change('well-pit', 'healthy', 'open'), new Set(['well-pit']))).toEqual([]);
    expect(alarmInputsFor(loops, change('well-pit', 'healthy', 'tripped'), new Set(['well-pit']))).toHaveLength(1);
    const on: SiteEffect = { kind: 'loop', loopId: 'well-pit', atMs: 0, effect: { kind: 'intermittent', on: true, atUs: 0, faultsInWindow: 3 } };
    expect(alarmInputsFor(loops, on, new Set())[0]).toMatchObject({ kind: 'raise', condition: 'intermittent' });
  });

  it('makes one offline condition per decoder, not one per loop', () => {
    expect(alarmInputsFor(loops, { kind: 'decoder-offline', decoderId: 'main', atMs: 0, reason: 'silent' }, new Set())).toEqual([
      { kind: 'raise', source: 'main', loopId: null, condition: 'offline', latched: false, policy: 'default' },
    ]);
    expect(alarmInputsFor(loops, change('well-pit', 'healthy', 'offline'), new Set())).toEqual([]);
  });

  it('raises decoder trouble for a fault the decoder reports, a clock that runs ahead and a mass trip, and nothing for ordinary lines', () => {
    const decoderFault = { kind: 'raise', source: 'main', loopId: null, condition: 'decoder-fault', latched: false, policy: 'default' };
    const fault: SiteEffect = { kind: 'decoder', decoderId: 'main', atMs: 0, event: { kind: 'fault', code: 'SUPPLY', decoderUs: 5 } };
    expect(alarmInputsFor(loops, fault, new Set())).toEqual([decoderFault]);
    expect(alarmInputsFor(loops, { kind: 'decoder-clock', decoderId: 'main', atMs: 0, aheadMs: 5000 }, new Set())).toEqual([decoderFault]);
    expect(alarmInputsFor(loops, { kind: 'decoder-mass-trip', decoderId: 'main', atMs: 0, loops: 2 }, new Set())).toEqual([decoderFault]);
    const lost: SiteEffect = { kind: 'decoder', decoderId: 'main', atMs: 0, event: { kind: 'lost', count: 2, decoderUs: 5 } };
    expect(alarmInputsFor(loops, lost, new Set())).toEqual([]);
    const edge: SiteEffect = { kind: 'edge', decoderId: 'main', input: 1, band: 'N', decoderUs: 5, atMs: 0 };
    expect(alarmInputsFor(loops, edge, new Set())).toEqual([]);
  });

  it('clears intermittent when the loop settles, and raises nothing for a plain heartbeat pulse', () => {
    const off: SiteEffect = { kind: 'loop', loopId: 'well-pit', atMs: 0, effect: { kind: 'intermittent', on: false, atUs: 0, faultsInWindow: 0 } };
    expect(alarmInputsFor(loops, off, new Set(['well-pit']))).toEqual([{ kind: 'clear', source: 'well-pit', condition: 'intermittent' }]);
    const pulse: SiteEffect = { kind: 'loop', loopId: 'well-pit', atMs: 0, effect: { kind: 'pulse', atUs: 0, widthUs: 1000, intervalUs: 500_000 } };
    expect(alarmInputsFor(loops, pulse, new Set())).toEqual([]);
  });
});
