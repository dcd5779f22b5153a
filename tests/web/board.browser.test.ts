import { existsSync, mkdirSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { join } from 'node:path';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { newAckTokenId, signAckToken } from '../../src/notify/ackToken.js';
import { ACK_SECRET, startTestWeb, USERS, type TestWeb } from './fixtures/testWeb.js';

const CHROMIUM = '/usr/bin/chromium';
const OUT = join(process.cwd(), 'tests', '.output', 'web');

let web: TestWeb;
let browser: Browser;
let base: string;

beforeAll(async () => {
  if (!existsSync(CHROMIUM)) {
    throw new Error(`${CHROMIUM} is missing: install Debian's chromium package (apt-get install chromium); .ci/run installs it in CI`);
  }
  mkdirSync(OUT, { recursive: true });
  web = await startTestWeb();
  await web.app.listen({ host: '127.0.0.1', port: 0 });
  base = `http://127.0.0.1:${(web.app.server.address() as AddressInfo).port}`;
  browser = await chromium.launch({
    executablePath: CHROMIUM,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
}, 60_000);

afterAll(async () => {
  await browser?.close();
  await web?.close();
});

/** WCAG 2.2 SC 2.5.8 asks 24 px at least; we hold every control to 48 px (a common touch-target guideline). */
async function smallTapTargets(page: Page): Promise<string[]> {
  return page.$$eval('a, button, input:not([type=hidden]), select, textarea, summary', (elements) =>
    elements
      .filter((el) => (el as HTMLElement).offsetParent !== null)
      .map((el) => ({ el, box: el.getBoundingClientRect() }))
      .filter(({ box }) => box.height < 48)
      .map(({ el, box }) => `${el.tagName.toLowerCase()} "${(el.textContent ?? '').trim().slice(0, 30)}" ${Math.round(box.height)}px`),
  );
}

async function overflowsPhone(page: Page): Promise<boolean> {
  return page.evaluate(() => document.documentElement.scrollWidth > window.innerWidth);
}

describe('the board on a phone, in headless Chromium', () => {
  it('sign in, see the tripped loop, open its alarm, acknowledge with a note, see the board change — live', async () => {
    const context = await browser.newContext({ viewport: { width: 390, height: 844 }, deviceScaleFactor: 1 });
    const page = await context.newPage();
    const problems: string[] = [];
    page.on('console', (msg) => {
      if (msg.type() === 'error') problems.push(msg.text());
    });
    page.on('pageerror', (err) => problems.push(err.message));

    await page.goto(`${base}/`);
    expect(new URL(page.url()).pathname).toBe('/login');
    await page.screenshot({ path: join(OUT, '01-login.png'), fullPage: true });
    expect(await smallTapTargets(page)).toEqual([]);

    await page.fill('#login-name', 'otto');
    await page.fill('#login-password', USERS.otto.password);
    await Promise.all([page.waitForURL(`${base}/`), page.click('button[type=submit]:has-text("Sign in")')]);

    const seed = page.locator('li.card[data-loop="seed-store"]');
    await expect.poll(() => seed.textContent()).toContain('Tripped');
    // The tripped loop is the first card on the board.
    expect(await page.locator('li.card').first().getAttribute('data-loop')).toBe('seed-store');
    await page.screenshot({ path: join(OUT, '02-board.png'), fullPage: true });
    expect(await smallTapTargets(page)).toEqual([]);
    expect(await overflowsPhone(page)).toBe(false);

    await Promise.all([page.waitForURL(`${base}/alarms/7`), seed.locator('a').click()]);
    await expect.poll(() => page.locator('h1').textContent()).toContain('Seed store');
    expect(await page.textContent('body')).toContain('What to check');
    await page.screenshot({ path: join(OUT, '03-alarm.png'), fullPage: true });
    expect(await smallTapTargets(page)).toEqual([]);
    expect(await overflowsPhone(page)).toBe(false);

    await page.fill('#ack-note', 'Heater back on, checking the seed trays');
    await Promise.all([page.waitForURL(/\/alarms\/7\?done=ack$/), page.click('button:has-text("Acknowledge")')]);
    expect(await page.textContent('.flash')).toBe('Acknowledged.');
    expect(await page.textContent('body')).toContain('Heater back on, checking the seed trays');
    await page.screenshot({ path: join(OUT, '04-acknowledged.png'), fullPage: true });
    expect(web.site.calls).toEqual([{ command: 'acknowledge', args: [7, 'otto', 'Heater back on, checking the seed trays'] }]);

    await Promise.all([page.waitForURL(`${base}/`), page.click('nav >> text=Board')]);
    await expect.poll(() => seed.textContent()).toContain('acknowledged');
    expect(await seed.textContent()).not.toContain('not acknowledged');
    await page.screenshot({ path: join(OUT, '05-board-after-ack.png'), fullPage: true });

    // Live: the daemon reports a new trip; the open board shows it without a reload.
    await expect.poll(() => web.site.live.listenerCount()).toBe(1);
    const marker = await page.evaluate(() => ((window as unknown as { marker: number }).marker = 42));
    const hen = web.site.loops.find((l) => l.id === 'hen-house')!;
    hen.state = 'tripped';
    hen.sinceMs = web.clock.now;
    hen.alarm = { id: 10, condition: 'tripped', priority: 'alarm', state: 'unacknowledged' };
    web.site.live.emit({ type: 'loops' });
    const henCard = page.locator('li.card[data-loop="hen-house"]');
    await expect.poll(() => henCard.textContent()).toContain('Tripped');
    expect(await page.evaluate(() => (window as unknown as { marker?: number }).marker)).toBe(marker);
    await page.screenshot({ path: join(OUT, '06-board-live-trip.png'), fullPage: true });

    await page.goto(`${base}/loops/seed-store`);
    await page.screenshot({ path: join(OUT, '07-loop.png'), fullPage: true });
    await page.locator('figure.timeline').screenshot({ path: join(OUT, '07b-timeline.png') });
    expect(await overflowsPhone(page)).toBe(false);

    await page.goto(`${base}/history`);
    await page.screenshot({ path: join(OUT, '08-history.png'), fullPage: false });
    expect(await smallTapTargets(page)).toEqual([]);

    expect(problems).toEqual([]);
    await context.close();
  }, 60_000);

  it('works with JavaScript off: plain forms, POST-redirect-GET', async () => {
    web.site.alarms.find((a) => a.id === 9)!.state = 'unacknowledged';
    const context = await browser.newContext({ viewport: { width: 390, height: 844 }, javaScriptEnabled: false });
    const page = await context.newPage();
    await page.goto(`${base}/login`);
    await page.fill('#login-name', 'ada');
    await page.fill('#login-password', USERS.ada.password);
    await Promise.all([page.waitForURL(`${base}/`), page.click('button:has-text("Sign in")')]);
    await page.click('a[href="/alarms/9"]');
    await page.fill('#ack-note', 'mail server rebooted');
    await Promise.all([page.waitForURL(/done=ack/), page.click('button:has-text("Acknowledge")')]);
    expect(await page.textContent('.flash')).toBe('Acknowledged.');
    await page.screenshot({ path: join(OUT, '09-no-js-acknowledged.png'), fullPage: true });
    await context.close();
  }, 60_000);

  it('an acknowledge link from a mail: the page asks, the button acknowledges', async () => {
    const alarm = web.site.alarms.find((a) => a.id === 7)!;
    alarm.state = 'unacknowledged';
    const token = signAckToken({ alarmId: 7, contactId: 'office', expiresAt: web.clock.now + 3_600_000, tokenId: newAckTokenId() }, ACK_SECRET);
    const context = await browser.newContext({ viewport: { width: 390, height: 844 } });
    const page = await context.newPage();
    const before = web.site.calls.length;
    await page.goto(`${base}/ack/${token}`);
    expect(await page.textContent('h1')).toBe('Acknowledge this alarm?');
    expect(web.site.calls.length).toBe(before);
    await page.screenshot({ path: join(OUT, '10-ack-link-confirm.png'), fullPage: true });
    expect(await smallTapTargets(page)).toEqual([]);
    await page.fill('#ack-note', 'from the tractor');
    await page.click('button:has-text("Acknowledge")');
    await expect.poll(() => page.textContent('h1')).toBe('Acknowledged');
    await page.screenshot({ path: join(OUT, '11-ack-link-done.png'), fullPage: true });
    expect(web.site.calls.at(-1)).toEqual({ command: 'acknowledge', args: [7, 'Farm office (mail link)', 'from the tractor'] });
    await page.goto(`${base}/ack/${token}`);
    expect(await page.textContent('h1')).toBe('Link refused');
    await context.close();
  }, 60_000);
});
