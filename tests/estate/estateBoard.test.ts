import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { join } from 'node:path';
import pino from 'pino';
import { chromium, type Browser } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfig } from '../../src/config/loadConfig.js';
import { startMonitor, type Monitor } from '../../src/daemon/startMonitor.js';
import { isReporting, standingOf } from '../../src/estate/estateBook.js';
import { loadEstateConfig } from '../../src/estate/loadEstateConfig.js';
import { startEstate, type Estate } from '../../src/estate/startEstate.js';
import { insertUser } from '../../src/store/accountRepos.js';
import { hashPassword } from '../../src/web/auth/passwordHash.js';
import { ESTATE_USER, startMosquitto, type MosquittoBroker } from '../helpers/mosquittoBroker.js';
import { startSmtpSink, type SmtpSink } from '../helpers/smtpSink.js';
import { stopChild } from '../helpers/stopChild.js';
import { makeTempDir, type TempDir } from '../helpers/tempDir.js';
import { waitFor } from '../helpers/waitFor.js';
import { siteEnv, writeSimSite } from '../mqtt/fixtures/simSite.js';

/**
 * Three simulated sites and one estate board on a real Mosquitto: two sites in this process, one
 * (farm-z) a child process running the built CLI, so it can be killed with SIGKILL. The estate mails
 * a real SMTP server on loopback and is looked at in headless Chromium at phone size.
 */
const CHROMIUM = '/usr/bin/chromium';
const OUT = join(process.cwd(), 'tests', '.output', 'estate');
const KEEPALIVE_MS = 2000;
const PASSWORD = 'estate-viewer-pass';
/** Far beyond the Will's bound, so only the broker's Last Will can make a frozen site read "not reporting" in time. */
const STALE_AFTER_S = 30;

let tmp: TempDir;
let broker: MosquittoBroker;
let smtp: SmtpSink;
const monitors: Monitor[] = [];
const children = new Map<string, ChildProcess>();
let estate: Estate | null = null;
let estateFile: string;

function writeEstateConfig(dir: string): string {
  const file = join(dir, 'estate.yaml');
  writeFileSync(
    file,
    `estate: { name: "Hollow Lane estate", timezone: "Europe/London" }
mqtt: { url: ${broker.url}, username: ${ESTATE_USER.name}, pass_env: PW_ESTATE_PASS, keepalive: 2s, client_id: estate-test, stale_after: ${STALE_AFTER_S}s }
sites:
  - { id: farm-x, name: "Ash Farm", url: "https://farm-x.example.org/" }
  - { id: farm-y, name: "Birch Yard" }
  - { id: farm-z, name: "Cedar Cottages", url: "https://farm-z.example.org/" }
contacts: [{ id: steward, name: "Estate steward", email: "steward@example.org" }]
escalation: { default: { steps: [{ after: 0m, notify: [steward] }] } }
mail:
  from: "estate <estate@example.org>"
  smtp: { host: 127.0.0.1, port: ${smtp.port}, user: monitor, pass: pw-test }
  group_window: 0s
storage: { path: ${join(dir, 'estate.db')} }
web: { listen: "127.0.0.1:0" }
`,
  );
  return file;
}

const estateEnv = { ...process.env, PW_ESTATE_PASS: ESTATE_USER.pass };

beforeAll(async () => {
  tmp = makeTempDir('pw-estate-');
  broker = await startMosquitto(tmp.dir, ['farm-x', 'farm-y', 'farm-z']);
  smtp = await startSmtpSink({ user: 'monitor', pass: 'pw-test' });
  const x = writeSimSite(tmp.dir, 'farm-x', broker.url, { freezeAt: '1s' });
  monitors.push(await startMonitor({ config: loadConfig(x.configFile), configDir: x.dir, logger: pino({ level: 'silent' }), listen: false, announce: false, env: siteEnv('farm-x') }));
  const cli = join(process.cwd(), 'dist', 'src', 'cli', 'main.js');
  if (!existsSync(cli)) throw new Error('dist/ is missing: run `npm run build` first');
  for (const id of ['farm-y', 'farm-z']) {
    const { configFile } = writeSimSite(tmp.dir, id, broker.url);
    children.set(id, spawn(process.execPath, [cli, 'run', '--config', configFile], { env: { ...siteEnv(id), PAIRWATCH_LOG_LEVEL: 'warn' }, stdio: 'ignore' }));
  }
  estateFile = writeEstateConfig(tmp.dir);
  estate = await startEstate({ config: loadEstateConfig(estateFile), logger: pino({ level: 'silent' }), env: estateEnv });
  const hashed = await hashPassword(PASSWORD);
  insertUser(estate.store.db, { name: 'steward', role: 'viewer', passwordHash: hashed.hash, passwordSalt: hashed.salt, createdAt: Date.now() });
}, 30_000);

afterAll(async () => {
  for (const c of children.values()) await stopChild(c, 'SIGKILL');
  await estate?.stop();
  for (const m of monitors) await m.stop('test over', 2000);
  await smtp?.close();
  await broker?.close();
  tmp?.cleanup();
});

/** Resolves when `check` holds, re-checked on every estate change (message or verdict check). */
function whenEstate(e: Estate, check: () => boolean, what: string, timeoutMs = 15_000): Promise<void> {
  return waitFor(check, timeoutMs, () => what);
}

describe('the estate board', () => {
  it('sees all three sites report, farm-x in alarm and first on the board', async () => {
    const e = estate!;
    const site = (id: string) => e.book().sites[id]!;
    await whenEstate(e, () => ['farm-x', 'farm-y', 'farm-z'].every((id) => isReporting(site(id), Date.now(), e.view().staleAfterMs)), 'all three sites reporting', 20_000);
    await whenEstate(e, () => site('farm-x').alarms.some((a) => a.condition === 'tripped'), 'farm-x alarm');
    expect(standingOf(site('farm-x'), Date.now(), e.view().staleAfterMs)).toBe('alarm');
    await whenEstate(e, () => Object.keys(site('farm-y').loops).length === 2, 'farm-y loops');
    await waitFor(() => smtp.messages.some((m) => m.subject === '[ALARM] Hollow Lane estate: Ash Farm: North shed — tripped'), 10_000, () => 'the estate mail about the alarm');
  }, 30_000);

  it('kill -9 of a site reads "site not reporting" (its socket closes, so the broker sends the Last Will at once)', async () => {
    const e = estate!;
    const y = () => e.book().sites['farm-y']!;
    // Order, not speed: online up to the kill, offline (by its Will) only after it.
    expect(y().status?.online).toBe(true);
    children.get('farm-y')!.kill('SIGKILL');
    await whenEstate(e, () => !isReporting(y(), Date.now(), e.view().staleAfterMs), 'farm-y not reporting', 1.5 * KEEPALIVE_MS + 5000);
    expect(y().status).toMatchObject({ online: false, reason: 'connection lost' });
    await waitFor(() => smtp.messages.some((m) => m.subject === '[TROUBLE] Hollow Lane estate: Birch Yard — site not reporting'), 10_000, () => 'the "site not reporting" mail');
  }, 20_000);

  it('a site frozen with its connection open (SIGSTOP: silent, no FIN) reads "site not reporting" by its Last Will, sent after 1.5 × keep-alive', async () => {
    const e = estate!;
    const z = () => e.book().sites['farm-z']!;
    const frozen = children.get('farm-z')!;
    expect(z().status?.online).toBe(true);
    const stoppedAt = Date.now();
    frozen.kill('SIGSTOP');
    await whenEstate(e, () => !isReporting(z(), Date.now(), e.view().staleAfterMs), 'farm-z not reporting', 10_000);
    const took = Date.now() - stoppedAt;
    // It was the Last Will, not the estate's own silence rule (30 s): the broker declares a client gone after
    // 1.5 × keep-alive without a packet and publishes its Will (OASIS MQTT 5.0 §3.1.2.10, §3.1.2.5). Mosquitto
    // checks keep-alives about once a second, so on a loaded machine the Will lands a little after 3 s; the test
    // does not time it against the clock beyond "before the silence rule could have fired".
    expect(z().status).toMatchObject({ online: false, reason: 'connection lost' });
    expect(took).toBeLessThan(STALE_AFTER_S * 1000);
    // Not a socket close: the site's last packet was at most one keep-alive before the freeze, so the broker
    // cannot time it out sooner than half a keep-alive after it (a lower bound, so a slow machine cannot fail it).
    expect(took).toBeGreaterThanOrEqual(KEEPALIVE_MS / 2);
    frozen.kill('SIGKILL');
    await waitFor(() => smtp.messages.some((m) => m.subject === '[TROUBLE] Hollow Lane estate: Cedar Cottages — site not reporting'), 10_000, () => 'the "site not reporting" mail');
  }, 20_000);

  it('renders at 390×844 in Chromium: worst first, counts, "site not reporting", and a site page linking to the site', async () => {
    if (!existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} is missing: install Debian's chromium package; .ci/run installs it`);
    mkdirSync(OUT, { recursive: true });
    const base = `http://127.0.0.1:${(estate!.web.server.address() as AddressInfo).port}`;
    const browser: Browser = await chromium.launch({ executablePath: CHROMIUM, args: ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'] });
    try {
      const page = await (await browser.newContext({ viewport: { width: 390, height: 844 } })).newPage();
      await page.goto(`${base}/`);
      expect(new URL(page.url()).pathname).toBe('/login');
      await page.fill('#login-name', 'steward');
      await page.fill('#login-password', PASSWORD);
      await Promise.all([page.waitForURL(`${base}/`), page.click('button[type=submit]')]);
      const cards = page.locator('li.card');
      expect(await cards.count()).toBe(3);
      expect(await cards.nth(0).getAttribute('data-site')).toBe('farm-x');
      // Then the two silent sites; the one silent longest first.
      expect(await cards.nth(1).textContent()).toContain('Site not reporting');
      expect(await cards.nth(2).textContent()).toContain('Site not reporting');
      expect(await cards.nth(0).textContent()).toContain('1 alarm');
      expect(await page.evaluate(() => document.documentElement.scrollWidth > window.innerWidth)).toBe(false);
      await page.screenshot({ path: join(OUT, '01-estate-board.png'), fullPage: true });
      // The board refreshes itself: blank the live part, and the script puts the fragment back (no reload).
      await page.evaluate(() => {
        (window as unknown as { notReloaded: boolean }).notReloaded = true;
        document.getElementById('estate-live')!.innerHTML = '';
        window.dispatchEvent(new Event('focus'));
      });
      await page.waitForFunction(() => document.querySelectorAll('#estate-live li.card').length === 3, undefined, { timeout: 20_000 });
      expect(await page.evaluate(() => (window as unknown as { notReloaded?: boolean }).notReloaded)).toBe(true);
      await Promise.all([page.waitForURL(`${base}/sites/farm-x`), cards.nth(0).locator('a').click()]);
      expect(await page.textContent('h1')).toBe('Ash Farm');
      expect(await page.getAttribute('a.button-main', 'href')).toBe('https://farm-x.example.org/');
      expect(await page.textContent('body')).toContain('North shed');
      expect(await page.evaluate(() => document.documentElement.scrollWidth > window.innerWidth)).toBe(false);
      await page.screenshot({ path: join(OUT, '02-estate-site.png'), fullPage: true });
    } finally {
      await browser.close();
    }
  }, 40_000);

  it('restarts from the retained messages alone, and tells its contacts again about what is still unacknowledged', async () => {
    // After a restart one mail may list several conditions (the silent sites are raised at once too).
    const alarmMails = () => smtp.messages.filter((m) => m.subject?.startsWith('[ALARM] Hollow Lane estate: ') && m.subject.includes('Ash Farm: North shed')).length;
    const before = alarmMails();
    await estate!.stop();
    estate = await startEstate({ config: loadEstateConfig(estateFile), logger: pino({ level: 'silent' }), env: estateEnv, listen: false });
    const e = estate;
    await whenEstate(e, () => e.book().sites['farm-x']!.alarms.some((a) => a.condition === 'tripped') && e.book().sites['farm-z']!.status !== null && e.book().sites['farm-y']!.status !== null && Object.keys(e.book().sites['farm-y']!.loops).length === 2, 'the retained picture');
    expect(e.book().sites['farm-z']!.status?.online).toBe(false);
    expect(e.book().sites['farm-y']!.status?.online).toBe(false);
    expect(standingOf(e.book().sites['farm-x']!, Date.now(), e.view().staleAfterMs)).toBe('alarm');
    // Its escalation lived in memory: told twice rather than not at all.
    await waitFor(() => alarmMails() === before + 1, 10_000, () => 'the alarm mailed again after the restart');
  }, 20_000);
});
