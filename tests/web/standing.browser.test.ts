import { existsSync } from 'node:fs';
import type { AddressInfo } from 'node:net';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { composeNoticeMail } from '../../src/notify/composeNoticeMail.js';
import { sampleNoticeAlarm } from '../helpers/sampleAlarm.js';
import { settings } from '../notify/helpers/fixtures.js';
import { session, startTestWeb, type TestWeb } from './fixtures/testWeb.js';

/**
 * Issue 9, item 18, in real headless Chromium: an alarm back to normal but not acknowledged must look
 * different both from a healthy loop and from an active alarm (computed styles, not class names), a
 * closed alarm's page must not keep the red banner, and the mail about it must say the same in its
 * subject and body as a mail reader shows them. Item 19: the history's "Exact times" is drawn as a
 * control, with a visible focus ring when reached from the keyboard.
 */
const CHROMIUM = '/usr/bin/chromium';
const BACK = 'back to normal — still needs acknowledging';

let web: TestWeb;
let browser: Browser;
let context: BrowserContext;
let base: string;

beforeAll(async () => {
  if (!existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} is missing: install Debian's chromium package; .ci/run installs it in CI`);
  web = await startTestWeb();
  await web.app.listen({ host: '127.0.0.1', port: 0 });
  base = `http://127.0.0.1:${(web.app.server.address() as AddressInfo).port}`;
  // Seed store: tripped, latched, its condition gone, nobody has acknowledged it. Hen house: tripped now.
  const seed = web.site.loops.find((l) => l.id === 'seed-store')!;
  seed.state = 'healthy';
  seed.alarm = { ...seed.alarm!, active: false };
  const alarm7 = web.site.alarms.find((a) => a.id === 7)!;
  alarm7.active = false;
  alarm7.clearedAtMs = web.clock.now - 60_000;
  const hen = web.site.loops.find((l) => l.id === 'hen-house')!;
  hen.state = 'tripped';
  hen.alarm = { id: 11, condition: 'tripped', priority: 'alarm', state: 'unacknowledged', active: true };

  browser = await chromium.launch({
    executablePath: CHROMIUM,
    args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
  });
  const otto = await session(web.app, 'otto');
  context = await browser.newContext({ viewport: { width: 390, height: 844 } });
  await context.addCookies([{ name: 'pw_session', value: otto.cookie.slice('pw_session='.length), url: base }]);
}, 60_000);

afterAll(async () => {
  await context?.close();
  await browser?.close();
  await web?.close();
});

interface Look {
  border: string;
  background: string;
  shapeColour: string;
  shape: string;
}

async function lookOf(page: Page, selector: string): Promise<Look> {
  // The live board may swap its cards in just as we read one: a card read while detached has no computed
  // style at all (every field empty). Read again until the card is in the document; never a timing check.
  for (let attempt = 0; ; attempt++) {
    const look = await readLook(page, selector);
    if (look.border.trim() !== '' || attempt >= 40) return look;
    await page.waitForTimeout(50);
  }
}

async function readLook(page: Page, selector: string): Promise<Look> {
  await page.waitForSelector(selector, { state: 'attached' });
  return page.$eval(selector, (el) => {
    const style = getComputedStyle(el);
    const svg = el.querySelector('svg.shape')!;
    return {
      border: `${style.borderTopWidth} ${style.borderTopStyle} ${style.borderTopColor}`,
      background: style.backgroundColor,
      shapeColour: getComputedStyle(svg).color,
      shape: svg.innerHTML,
    };
  });
}

describe('back to normal, still needs acknowledging, as a browser draws it (issue 9, item 18)', () => {
  it('on the board: unlike a healthy card and unlike an active alarm card, in border, background and shape', async () => {
    const page = await context.newPage();
    await page.goto(`${base}/`);
    const back = await lookOf(page, 'li.card[data-loop="seed-store"]');
    const healthy = await lookOf(page, 'li.card[data-loop="glasshouse"]');
    const active = await lookOf(page, 'li.card[data-loop="hen-house"]');
    expect(back.border).not.toBe(healthy.border);
    expect(back.border).not.toBe(active.border);
    expect(back.border).toMatch(/dashed/);
    expect(back.shape).not.toBe(healthy.shape);
    expect(back.shape).not.toBe(active.shape);
    expect(back.shapeColour).not.toBe(healthy.shapeColour);
    // Attention: the same colour family as an active alarm's border, not the healthy green.
    expect(back.border.replace(/^\S+ \S+ /, '')).toBe(active.border.replace(/^\S+ \S+ /, ''));
    expect(await page.locator('li.card[data-loop="seed-store"] .card-state').textContent()).toBe('Back to normal — still needs acknowledging');
    await page.close();
  });

  it('on the alarm pages: attention while unacknowledged, and a closed alarm has no red banner', async () => {
    const page = await context.newPage();
    await page.goto(`${base}/alarms/7`);
    const back = await lookOf(page, '.status');
    expect((await page.locator('.status-state').textContent())?.toLowerCase()).toBe(BACK);
    await page.goto(`${base}/alarms/3`);
    const closed = await lookOf(page, '.status');
    web.site.alarms.find((a) => a.id === 7)!.active = true;
    await page.goto(`${base}/alarms/7`);
    const active = await lookOf(page, '.status');
    web.site.alarms.find((a) => a.id === 7)!.active = false;

    expect(back.border).not.toBe(active.border);
    expect(back.background).not.toBe(active.background);
    expect(closed.background).not.toBe(active.background);
    expect(closed.border).not.toBe(active.border);
    expect(closed.border).not.toBe(back.border);
    // The alarm colour (--alarm) is nowhere on the closed banner.
    const alarmRed = active.border.replace(/^\S+ \S+ /, '');
    expect(closed.border).not.toContain(alarmRed);
    expect(closed.shapeColour).not.toBe(alarmRed);
    await page.close();
  });

  it('the mail about it, as a mail reader shows the HTML part: heading and status row agree', async () => {
    const t0 = Date.parse('2026-12-01T03:00:00.000Z');
    const alarm = sampleNoticeAlarm(t0, { loopId: 'well', source: 'well', state: 'unacknowledged', active: false, clearedAt: t0 + 60_000 });
    const mail = composeNoticeMail(
      { contactId: 'office', dueAt: t0, notices: [{ id: 1, contactId: 'office', alarmId: 1, kind: 'cleared', createdAt: t0, dueAt: t0, actor: null, note: null }] },
      { ...settings(), now: t0 + 120_000, alarms: new Map([[1, alarm]]), recipients: new Map() },
    );
    const page = await context.newPage();
    await page.setContent(mail.html);
    expect(await page.locator('h1').textContent()).toBe(mail.subject);
    expect(mail.subject).toContain(BACK);
    const status = await page.locator('tr', { has: page.locator('th', { hasText: /^Status$/ }) }).locator('td').textContent();
    expect(status).toBe(BACK);
    await page.close();
  });
});

describe('the history filter (issue 9, item 19)', () => {
  it('"Exact times" is drawn as a control and shows a focus ring when reached by keyboard', async () => {
    const page = await context.newPage();
    await page.goto(`${base}/history`);
    const summary = page.locator('summary', { hasText: 'Exact times' });
    const drawn = await summary.evaluate((el) => {
      const s = getComputedStyle(el);
      return { border: parseFloat(s.borderTopWidth), style: s.borderTopStyle, cursor: s.cursor, height: el.getBoundingClientRect().height };
    });
    expect(drawn.border).toBeGreaterThanOrEqual(2);
    expect(drawn.style).toBe('solid');
    expect(drawn.cursor).toBe('pointer');
    expect(drawn.height).toBeGreaterThanOrEqual(48);
    await page.focus('#f-period');
    await page.keyboard.press('Tab');
    const ring = await summary.evaluate((el) => {
      const s = getComputedStyle(el);
      return { focused: document.activeElement === el, style: s.outlineStyle, width: parseFloat(s.outlineWidth) };
    });
    expect(ring.focused).toBe(true);
    expect(ring.style).toBe('solid');
    expect(ring.width).toBeGreaterThanOrEqual(2);
    // It works as a control: Enter opens the exact-time fields.
    await page.keyboard.press('Enter');
    expect(await page.locator('#f-from').isVisible()).toBe(true);
    await page.close();
  });
});
