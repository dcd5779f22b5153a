import { join } from 'node:path';
import pino from 'pino';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { wireScript } from '../helpers/wireScript.js';

/**
 * `offline` is raised when the decoder's silence has elapsed, not at the next fast tick after it.
 * Fake timers and a fake clock: the silence deadline is put between two fast ticks (every 250 ms),
 * so a monitor that only checked on the tick would still be showing the decoder online.
 */
describe('offline at the silence deadline', () => {
  let tmp: TempDir | undefined;
  let monitor: Monitor | undefined;
  afterEach(async () => {
    await monitor?.stop('test over', 1000);
    vi.useRealTimers();
    tmp?.cleanup();
  });

  it('raises offline exactly when silence has elapsed since the last valid line, and again after the decoder comes back', async () => {
    vi.useFakeTimers({ toFake: ['setTimeout', 'clearTimeout', 'setInterval', 'clearInterval', 'Date'] });
    const start = Date.UTC(2031, 2, 3, 4, 0, 0);
    vi.setSystemTime(start);
    tmp = makeTempDir('pairwatch-offline-');
    const config = parseConfig(`
site: { name: "Deadline Croft" }
decoders: [{ id: main, port: "tcp://127.0.0.1:9", inputs: 1, silence: 2s }]
loops: [{ id: byre, name: "Byre", decoder: main, input: 1 }]
storage: { path: ${join(tmp.dir, 'site.db')} }
`);
    monitor = await startMonitor({ config, configDir: tmp.dir, logger: pino({ level: 'silent' }), listen: false, announce: false });
    const offlineAlarm = () => monitor!.core.openAlarms().find((a) => a.condition === 'offline' && a.active) ?? null;
    const lines = wireScript(1).hello(0).ticks(100_000, 300_000).build().map((l) => l.line);

    // Lines until 1.110 s after start; silence 2 s → deadline at 3.110 s, between the ticks at 3.000 and 3.250 s.
    for (const [i, line] of lines.entries()) {
      await vi.advanceTimersByTimeAsync(i === 0 ? 1_000 : 55);
      monitor.core.line('main', line, Date.now());
    }
    const lastLineAt = Date.now();
    expect(lastLineAt - start).toBe(1_000 + 55 * (lines.length - 1));
    await vi.advanceTimersByTimeAsync(2_000 - 1);
    expect(offlineAlarm()).toBeNull();
    await vi.advanceTimersByTimeAsync(1);
    expect(offlineAlarm()?.raisedAt).toBe(lastLineAt + 2_000);

    // Back online, then silent again: the deadline timer must be armed anew.
    const again = wireScript(1, { timeOffsetUs: 5_000_000 }).hello(0).ticks(100_000, 100_000).build().map((l) => l.line);
    for (const line of again) {
      await vi.advanceTimersByTimeAsync(30);
      monitor.core.line('main', line, Date.now());
    }
    const offline = () => monitor!.core.decoderRuntime('main')!.offline;
    expect(offline()).toBe(false);
    expect(offlineAlarm()).toBeNull();
    await vi.advanceTimersByTimeAsync(2_000 - 1);
    expect(offline()).toBe(false);
    await vi.advanceTimersByTimeAsync(1);
    // The same alarm comes back (it was never acknowledged); what matters is when.
    expect(offline()).toBe(true);
    expect(offlineAlarm()).not.toBeNull();
  });
});
