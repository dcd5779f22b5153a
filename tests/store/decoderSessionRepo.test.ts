import { join } from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { openStore, type Store } from '../../src/store/openStore.js';
import { makeTempDir } from '../helpers/tempDir.js';

const H = 3_600_000;
const DAY0 = Date.UTC(2026, 1, 1); // 2026-02-01T00:00Z

describe('decoderSessionRepo', () => {
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

  it('round-trips a session: open, hello, counters, close, latest', () => {
    const id = store.decoderSessions.open('office', DAY0);
    store.decoderSessions.hello(id, DAY0 + 150, 'lq-2.1.0', 8);
    store.decoderSessions.counters(id, { frames: 1000, badFrames: 3, lostFrames: 2 });
    store.decoderSessions.close(id, DAY0 + H, 'port closed');
    expect(store.decoderSessions.latest('office')).toEqual({
      id, decoderId: 'office', connectedAtMs: DAY0, helloAtMs: DAY0 + 150, firmware: 'lq-2.1.0', loops: 8,
      disconnectedAtMs: DAY0 + H, disconnectReason: 'port closed', frames: 1000, badFrames: 3, lostFrames: 2,
    });
    const second = store.decoderSessions.open('office', DAY0 + 2 * H);
    expect(store.decoderSessions.latest('office')?.id).toBe(second);
    expect(store.decoderSessions.latest('elsewhere')).toBeNull();
  });

  it('gives uptime and the frames counted within a 24 h window, not since the session began', () => {
    // Session A runs from day 0 00:00 (before the window) to day 1 10:00; session B from 11:00 onwards.
    // Window: day 1 07:00 → day 2 07:00. Hand-worked: A is up 3 h of it, B 20 h → 23 h.
    const a = store.decoderSessions.open('office', DAY0);
    for (let hour = 0; hour < 34; hour++) {
      // 100 frames and 1 lost frame per hour, totals reported at the end of each hour.
      store.decoderSessions.counters(a, { frames: 100 * (hour + 1), badFrames: 0, lostFrames: hour + 1 }, DAY0 + hour * H + H - 1);
    }
    store.decoderSessions.close(a, DAY0 + 34 * H, 'usb unplugged');
    const b = store.decoderSessions.open('office', DAY0 + 35 * H);
    store.decoderSessions.counters(b, { frames: 2000, badFrames: 5, lostFrames: 7 }, DAY0 + 54 * H);

    const since = DAY0 + 31 * H;
    const now = DAY0 + 55 * H;
    const uptime = store.decoderSessions.uptimeSince('office', since, now);
    // A: totals 3400/34 at close, 3100/31 when the window opened → 300 frames, 3 lost. B: all of it.
    expect(uptime).toEqual({ windowMs: 24 * H, connectedMs: 23 * H, sessions: 2, frames: 2300, badFrames: 5, lostFrames: 10 });
  });
});
