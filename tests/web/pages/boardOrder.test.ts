import { describe, expect, it } from 'vitest';
import { orderBoard } from '../../../src/web/pages/boardOrder.js';
import type { LoopView } from '../../../src/web/webPorts.js';

const loop = (id: string, partial: Partial<LoopView>): LoopView => ({
  id,
  name: id,
  location: null,
  decoder: 'd',
  input: 1,
  state: 'healthy',
  sinceMs: 0,
  lastPulseAtMs: null,
  inService: true,
  serviceNote: null,
  alarm: null,
  intermittent: false,
  ...partial,
});

describe('board order', () => {
  it('alarms, then trouble, then out of service, then healthy', () => {
    const groups = orderBoard([
      loop('b-healthy', {}),
      loop('a-healthy', {}),
      loop('open', { state: 'open', sinceMs: 20 }),
      loop('offline', { state: 'offline', sinceMs: 10 }),
      loop('tripped', { state: 'tripped' }),
      loop('latched', { state: 'healthy', alarm: { id: 1, condition: 'tripped', priority: 'alarm', state: 'returned-unacknowledged', active: false } }),
      loop('flappy', { intermittent: true }),
      loop('unknown', { state: 'unknown', sinceMs: 30 }),
      loop('parked', { state: 'tripped', inService: false }),
    ]);
    expect(groups.map((g) => [g.group, g.loops.map((l) => l.id)])).toEqual([
      ['alarm', ['latched', 'tripped']],
      ['trouble', ['flappy', 'offline', 'open', 'unknown']],
      ['out-of-service', ['parked']],
      ['healthy', ['a-healthy', 'b-healthy']],
    ]);
  });
});
