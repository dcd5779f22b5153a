import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join } from 'node:path';
import pino from 'pino';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { parseConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { ackTokenUsedAt } from '../../src/store/alarmRepo.js';
import { verifyAckToken } from '../../src/notify/ackToken.js';
import { loadOrCreateAckSecret } from '../../src/notify/ackSecret.js';
import { faultSiteYaml } from '../faults/fixtures/siteYaml.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';

/**
 * Acknowledge links against the real monitor (in-process, simulated clock, mail into the drop folder):
 * the link is spent by the acknowledgement it makes and only then, and the acknowledgement is recorded
 * as the contact the link was mailed to (issue 9, items 7 and 8).
 */
const T0 = Date.UTC(2026, 0, 21, 2, 0, 0);
let tmp: TempDir;
let monitor: Monitor;
let nowMs = T0;

beforeAll(async () => {
  vi.useFakeTimers({ toFake: ['setInterval', 'clearInterval'] });
  tmp = makeTempDir('pw-acklink-tx-');
  const config = parseConfig(faultSiteYaml({ port: join(tmp.dir, 'no-decoder-here'), loops: 1, dbPath: join(tmp.dir, 'data', 'site.db') }));
  monitor = await startMonitor({ config, configDir: tmp.dir, logger: pino({ level: 'silent' }), now: () => nowMs, listen: false });
  // No decoder is plugged in: after its silence time it is offline, an alarm with a mail to "Farm office".
  for (let i = 0; i < 40; i++) {
    nowMs += 1000;
    monitor.core.tick(nowMs);
    await monitor.runNotifications(true);
  }
});

afterAll(async () => {
  await monitor?.stop('test over', 3000);
  vi.useRealTimers();
  tmp?.cleanup();
});

function mailedLinks(): Array<{ file: string; token: string }> {
  const folder = monitor.mailFolder!;
  return readdirSync(folder)
    .filter((n) => n.endsWith('.eml'))
    .flatMap((name) => {
      const text = readFileSync(join(folder, name), 'utf8').replace(/=\r\n/g, '');
      return [...text.matchAll(/\/ack\/([A-Za-z0-9._~-]+)/g)].map((m) => ({ file: name, token: m[1]! }));
    });
}

const postAck = (token: string, alarmId: number, note = '') =>
  monitor.web.inject({
    method: 'POST',
    url: `/ack/${token}`,
    headers: { 'content-type': 'application/x-www-form-urlencoded' },
    payload: new URLSearchParams({ alarm: String(alarmId), note }).toString(),
  });

describe('acknowledge links in the real monitor', () => {
  it('a mailed link names its contact; acknowledging records "Farm office (mail link)" and spends exactly that link', async () => {
    const secret = loadOrCreateAckSecret(monitor.dataDir);
    const offline = monitor.core.openAlarms().find((a) => a.condition === 'offline');
    expect(offline, 'the offline alarm was raised').toBeDefined();
    const links = [...new Set(mailedLinks().map((l) => l.token))].map((token) => ({ token, claims: verifyAckToken(token, secret, nowMs) }));
    const forOffline = links.filter((l) => l.claims.ok && l.claims.alarmId === offline!.id);
    expect(forOffline.length).toBeGreaterThanOrEqual(1);
    const first = forOffline[0]!;
    expect(first.claims).toMatchObject({ ok: true, contactId: 'office' });

    const res = await postAck(first.token, offline!.id, 'on my way');
    expect(res.statusCode).toBe(200);
    const audit = monitor.store.db.prepare("SELECT actor, note FROM audit WHERE alarm_id = ? AND action = 'acknowledge'").all(offline!.id);
    expect(audit).toEqual([{ actor: 'Farm office (mail link)', note: 'on my way' }]);
    expect(ackTokenUsedAt(monitor.store.db, (first.claims as { tokenId: string }).tokenId)).toBe(nowMs);
  });

  it('a refused acknowledgement (409: already acknowledged) leaves the link unspent', async () => {
    const secret = loadOrCreateAckSecret(monitor.dataDir);
    const offline = monitor.core.openAlarms().find((a) => a.condition === 'offline')!;
    expect(offline.state).toBe('acknowledged');
    const { signAckToken, newAckTokenId } = await import('../../src/notify/ackToken.js');
    const tokenId = newAckTokenId();
    const second = signAckToken({ alarmId: offline.id, contactId: 'shepherd', expiresAt: nowMs + 3_600_000, tokenId }, secret);
    const res = await postAck(second, offline.id);
    expect(res.statusCode).toBe(409);
    expect(ackTokenUsedAt(monitor.store.db, tokenId)).toBeNull();
    // The GET page does not claim the link was used.
    const page = await monitor.web.inject({ method: 'GET', url: `/ack/${second}` });
    expect(page.body).not.toContain('used already');
  });

  it('drop-folder mail and the data folder are owner-only (issue 9)', () => {
    const folder = monitor.mailFolder!;
    expect(statSync(folder).mode & 0o777).toBe(0o700);
    for (const name of readdirSync(folder)) expect(statSync(join(folder, name)).mode & 0o777, name).toBe(0o600);
    expect(statSync(monitor.dataDir).mode & 0o777).toBe(0o700);
    for (const suffix of ['', '-wal', '-shm']) expect(statSync(`${monitor.store.path}${suffix}`).mode & 0o777, suffix).toBe(0o600);
  });
});
