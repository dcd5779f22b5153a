import { createServer, type AddressInfo, type Socket } from 'node:net';
import { join } from 'node:path';
import Database from 'better-sqlite3';
import pino from 'pino';
import { afterEach, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { createMonitorCore } from '../../src/daemon/monitorCore.js';
import { startMonitor } from '../../src/daemon/startMonitor.js';
import { composeDailyReport, REPORT_PERIOD_MS } from '../../src/notify/composeDailyReport.js';
import { createDurableWriter } from '../../src/store/createDurableWriter.js';
import { openStore, type Store } from '../../src/store/openStore.js';
import { useTempDirs } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';
import { wireScript } from '../helpers/wireScript.js';
import { refLine } from './fixtures/refLine.js';
import { faultSiteYaml } from './fixtures/siteYaml.js';

/**
 * Issue 16 item 5: decoder sessions were never closed — not on a stop, not after a crash — so the
 * daily report added up open rows that overlapped each other and kept counting them on later days.
 * Here: a stop closes the session at the stop; a start after a crash closes the dead process's
 * session at the last frame it heard; uptime is the union of the intervals, never their sum.
 */
const T0 = Date.UTC(2026, 0, 22, 3, 0, 0);
const tempDir = useTempDirs('each');

interface SessionRow {
  id: number;
  connected_at: string;
  disconnected_at: string | null;
  disconnect_reason: string | null;
}

function sessionRows(dbPath: string): SessionRow[] {
  const db = new Database(dbPath, { readonly: true });
  try {
    return db.prepare('SELECT id, connected_at, disconnected_at, disconnect_reason FROM decoder_sessions ORDER BY id').all() as SessionRow[];
  } finally {
    db.close();
  }
}

function coreOn(store: Store, dbPath: string, now: number) {
  const config = parseConfig(faultSiteYaml({ port: '/dev/null-no-decoder', loops: 2, dbPath }));
  const writer = createDurableWriter({ store, now: () => now, onFailing: () => undefined, onRecovered: () => undefined });
  return createMonitorCore({ config, store, writer, logger: pino({ level: 'silent' }), now });
}

describe('decoder sessions are closed (issue 16 item 5)', () => {
  let stores: Store[] = [];
  afterEach(() => {
    for (const s of stores) if (s.db.open) s.close();
    stores = [];
  });

  it('a start after a crash closes the dead process session at the last frame it heard, not at the restart', () => {
    const dbPath = join(tempDir('pw-faults-sess-'), 'site.db');
    const first = openStore({ path: dbPath });
    stores.push(first);
    const core = coreOn(first, dbPath, T0);
    core.linkStatus('yard', { state: 'connected' }, T0);
    // 90 s of a healthy decoder: HELLO, pulses on both loops, TICKs; the 250 ms tick and the minute job as the shell runs them.
    const lines = wireScript(2).hello(0).pulses(1, 100_000, 90_000_000).pulses(2, 120_000, 90_000_000).ticks(0, 90_000_000, 1_000_000).build();
    let nextTick = T0 + 250;
    let lastLineAt = T0;
    for (const { atUs, line } of lines) {
      const at = T0 + Math.round(atUs / 1000);
      while (nextTick <= at) {
        core.tick(nextTick);
        if (nextTick === T0 + 60_000) core.minute(nextTick, T0);
        nextTick += 250;
      }
      core.line('yard', line, at);
      lastLineAt = at;
    }
    // kill -9 here: nothing more is written. The committed rows are all a restart finds.
    first.close();
    expect(sessionRows(dbPath)[0]?.disconnected_at).toBeNull();

    const restartAt = T0 + 10 * 60_000;
    const second = openStore({ path: dbPath });
    stores.push(second);
    coreOn(second, dbPath, restartAt);
    const [row] = sessionRows(dbPath);
    expect(row?.disconnected_at).not.toBeNull();
    const closedAt = Date.parse(row!.disconnected_at!);
    // Raw edges are committed once a second (EDGE_FLUSH_MS), so the last heard frame stored is at most ~1.25 s before the last line.
    expect(closedAt).toBeLessThanOrEqual(lastLineAt);
    expect(closedAt).toBeGreaterThanOrEqual(lastLineAt - 2000);
    expect(row!.disconnect_reason).toMatch(/did not stop cleanly/);
  });

  it('a stop (as on SIGTERM) closes the open session at the moment of the stop', async () => {
    const dir = tempDir('pw-faults-sess-stop-');
    const dbPath = join(dir, 'data', 'site.db');
    // A decoder behind a serial-to-network box on 127.0.0.1 that says HELLO to whoever connects.
    const sockets = new Set<Socket>();
    const server = createServer((socket) => {
      sockets.add(socket);
      socket.on('error', () => undefined);
      socket.write(`${refLine('HELLO 1 2 test-1')}\n${refLine('TICK 0 1000 NN')}\n`);
    });
    await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
    let nowMs = T0;
    const config = parseConfig(faultSiteYaml({ port: `tcp://127.0.0.1:${(server.address() as AddressInfo).port}`, loops: 2, dbPath }));
    const monitor = await startMonitor({ config, configDir: dir, logger: pino({ level: 'silent' }), now: () => nowMs, listen: false, announce: false });
    try {
      await waitFor(() => monitor.store.decoderSessions.latest('yard')?.helloAtMs != null, 10_000);
      nowMs = T0 + 5 * 60_000;
      await monitor.stop('stopped by the service manager (SIGTERM)', 2000);
    } finally {
      for (const s of sockets) s.destroy();
      await new Promise<void>((resolve) => server.close(() => resolve()));
    }
    const rows = sessionRows(dbPath);
    expect(rows).toHaveLength(1);
    expect(rows[0]!.disconnected_at).toBe(new Date(T0 + 5 * 60_000).toISOString());
    expect(rows[0]!.disconnect_reason).toMatch(/SIGTERM/);
  });

  it('the daily report counts overlapping open rows once: connected time is the union, restarts are the extra sessions', () => {
    const dbPath = join(tempDir('pw-faults-sess-report-'), 'site.db');
    const store = openStore({ path: dbPath });
    stores.push(store);
    const now = T0 + REPORT_PERIOD_MS;
    const start = now - 10 * 60_000;
    // As a daemon killed three times left them: three rows never closed, 30 s apart, then one closed properly.
    // Hand-worked: one port, so each open row ended when the next began → covered [start, start + 120 s] → 2 min.
    for (const offset of [0, 30_000, 60_000]) store.decoderSessions.open('yard', start + offset);
    const last = store.decoderSessions.open('yard', start + 90_000);
    store.decoderSessions.close(last, start + 120_000, 'port closed');
    const uptime = store.decoderSessions.uptimeSince('yard', now - REPORT_PERIOD_MS, now);
    expect(uptime.connectedMs).toBe(120_000);
    expect(uptime.sessions).toBe(4);
    const mail = composeDailyReport(
      {
        siteName: 'Brackenfold', timeZone: 'Europe/London', publicUrl: 'http://127.0.0.1:8080', generatedAt: now, nextReportAt: now + REPORT_PERIOD_MS,
        monitorStartedAt: start, loops: [], alarms: [], mail: { pending: 0, sentInPeriod: 0, failedAttemptsInPeriod: 0 },
        decoders: [{ id: 'yard', name: 'Yard decoder', status: 'disconnected', connectedMsInPeriod: uptime.connectedMs, restarts: uptime.sessions - 1, frames: 0, badFrames: 0, lostFrames: 0 }],
      },
      { from: 'monitor@brackenfold.example', to: ['office@brackenfold.example'], newMessageId: () => '<r1@brackenfold.example>' },
    );
    expect(mail.text).toContain('connected 2 min of 24 h (0.1 %), 3 restarts');

    // The next day's report: none of those rows is still open in any sense, so nothing counts.
    const nextDay = store.decoderSessions.uptimeSince('yard', now, now + REPORT_PERIOD_MS);
    expect(nextDay.connectedMs).toBe(0);
    expect(nextDay.sessions).toBe(0);
  });
});
