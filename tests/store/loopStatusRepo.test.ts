import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';
import { T0 } from './storeTestKit.js';

// RFC 3339 §5.6 date-time, restricted to the UTC "Z" form with milliseconds that the store writes.
const RFC3339_UTC = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{3}Z$/;

describe('loopStatusRepo', () => {
  let tmp: ReturnType<typeof makeTempDir>;
  let store: Store;
  beforeEach(() => {
    tmp = makeTempDir('pw-store-');
    store = openStore({ path: join(tmp.dir, 'pw.db') });
  });
  afterEach(() => {
    store.close();
    tmp.cleanup();
  });

  it('adds each loop once, as unknown since the given time', () => {
    expect(store.loopStatus.ensureLoops(['well-pit', 'barn-loft'], T0)).toEqual(['well-pit', 'barn-loft']);
    expect(store.loopStatus.ensureLoops(['well-pit', 'dairy'], T0 + 1000)).toEqual(['dairy']);
    expect(store.loopStatus.get('well-pit')).toEqual({
      loopId: 'well-pit', state: 'unknown', sinceMs: T0, lastPulseAtMs: null,
      inService: true, serviceNote: null, serviceBy: null, serviceAtMs: null,
    });
    expect(store.loopStatus.all().map((l) => l.loopId)).toEqual(['barn-loft', 'dairy', 'well-pit']);
    expect(store.loopStatus.get('nowhere')).toBeNull();
  });

  it('round-trips state, last pulse and service, with ISO 8601 UTC text in the columns', () => {
    store.loopStatus.ensureLoops(['well-pit'], T0);
    store.loopStatus.setState('well-pit', 'tripped', T0 + 1_234);
    store.loopStatus.setLastPulse('well-pit', T0 + 999);
    store.loopStatus.setService('well-pit', false, 'replacing the node', 'ann', T0 + 5_000);
    expect(store.loopStatus.get('well-pit')).toEqual({
      loopId: 'well-pit', state: 'tripped', sinceMs: T0 + 1_234, lastPulseAtMs: T0 + 999,
      inService: false, serviceNote: 'replacing the node', serviceBy: 'ann', serviceAtMs: T0 + 5_000,
    });
    const row = store.db.prepare('SELECT since_at, last_pulse_at, service_at FROM loop_status').get() as Record<string, string>;
    for (const text of Object.values(row)) expect(text).toMatch(RFC3339_UTC);
    expect(row.since_at).toBe('2026-01-15T06:00:01.234Z');
  });

  it('reports a corrupt state value by table and column instead of passing it on', () => {
    store.loopStatus.ensureLoops(['well-pit'], T0);
    store.db.prepare("UPDATE loop_status SET state = 'sparkly'").run();
    expect(() => store.loopStatus.get('well-pit')).toThrow(/loop_status\[well-pit\]\.state: unexpected value "sparkly"/);
  });
});
