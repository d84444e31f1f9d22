/**
 * The operator board in real headless Chromium against a running `streamfence demo`: it loads
 * without console errors, the caution is always visible, demo alerts appear, acknowledge and shelve
 * work from the page (mouse and keyboard) and show in /api/alerts, and a shelved alert comes back.
 * Screenshots go to test-artifacts/ only; test-artifacts/docs/board.png is the README's image, which
 * `npm run docs:images` copies to deploy/docs/.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync, writeFileSync } from 'node:fs';
import { chromium, type Browser, type Page } from 'playwright-core';
import { NOTICE } from '../../libs/schema/notice.js';
import { startDemo, type DemoProcess } from './demo-process.js';

const ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--no-first-run',
];
const ARTIFACTS = 'test-artifacts';

interface ApiAlert {
  id: string;
  sensor: string;
  status: string;
  acknowledged: boolean;
  acknowledgedBy: string | null;
  shelveReason: string | null;
  shelvedUntil: string | null;
}

async function apiAlerts(url: string): Promise<ApiAlert[]> {
  return (await (await fetch(`${url}/api/alerts`)).json()) as ApiAlert[];
}

describe('operator board in Chromium', () => {
  let demo: DemoProcess;
  let browser: Browser;
  let page: Page;
  const problems: string[] = [];
  const figures: Record<string, number> = {};

  beforeAll(async () => {
    mkdirSync(ARTIFACTS, { recursive: true });
    // Speed 1: the pre-rolled history puts alerts on the board at once, and they stay put while
    // the test acts on them (a faster plant could clear an alert between click and check).
    // Grouping off: this file checks single alert cards; test/browser/board-groups.test.ts covers groups.
    demo = await startDemo(['--speed', '1', '--seed', '11', '--group-depth', '0']);
    browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ARGS });
    page = await browser.newPage({ viewport: { width: 1400, height: 900 } });
    page.on('console', (m) => {
      if (m.type() === 'error' || m.type() === 'warning') problems.push(`${m.type()}: ${m.text()}`);
    });
    page.on('pageerror', (e) => problems.push(`pageerror: ${e.message}`));
  });

  afterAll(async () => {
    await browser?.close();
    await demo?.stop();
    writeFileSync(`${ARTIFACTS}/board-load.json`, JSON.stringify(figures, null, 2));
  });

  it('loads without console errors, shows the caution and the demo alerts', async () => {
    await page.goto(demo.url + '/');
    await page.locator('#active li.card').first().waitFor({ timeout: 30_000 });
    // Browser-side expressions are passed as strings: this project's TypeScript has no DOM types.
    const timing = (await page.evaluate(`(() => {
      const nav = performance.getEntriesByType('navigation')[0];
      const mark = performance.getEntriesByName('board-first-alert')[0];
      return { domContentLoaded: nav.domContentLoadedEventEnd, firstAlert: mark ? mark.startTime : -1 };
    })()`)) as { domContentLoaded: number; firstAlert: number };
    figures.domContentLoadedMs = Math.round(timing.domContentLoaded);
    figures.firstAlertRenderedMs = Math.round(timing.firstAlert);
    expect(timing.firstAlert).toBeGreaterThan(0);

    const caution = page.locator('#caution');
    expect(await caution.isVisible()).toBe(true);
    expect(await caution.textContent()).toContain(NOTICE);
    // Fixed band: inside the viewport even after scrolling to the bottom.
    await page.evaluate('window.scrollTo(0, document.body.scrollHeight)');
    const box = (await caution.boundingBox())!;
    expect(box.y + box.height).toBeLessThanOrEqual(900);
    expect(box.y).toBeGreaterThan(0);
    await page.evaluate('window.scrollTo(0, 0)');

    const api = await apiAlerts(demo.url);
    const active = api.filter((a) => a.status === 'active');
    expect(active.length).toBeGreaterThan(0);
    const shown = await page
      .locator('#active li.card')
      .evaluateAll((els) => els.map((e) => e.getAttribute('data-id')));
    expect(shown).toEqual(active.map((a) => a.id));
    // Severity is written out, not colour only.
    const sev = await page.locator('#active li.card .sev').first().textContent();
    expect(sev).toMatch(/CRITICAL|WARNING/);
    expect(await page.locator('#active li.card svg.chart').count()).toBe(active.length);
    await page.screenshot({ path: `${ARTIFACTS}/board-loaded.png`, fullPage: true });
    expect(problems, problems.join('\n')).toEqual([]);
  });

  it('acknowledges from the page by mouse and by keyboard, recording the operator', async () => {
    await page.fill('#operator', 'Ines Marrow');
    const first = page.locator('#active li.card').first();
    const id1 = (await first.getAttribute('data-id'))!;
    await first.getByRole('button', { name: 'Acknowledge' }).click();
    await expect
      .poll(async () => (await apiAlerts(demo.url)).find((a) => a.id === id1)?.acknowledgedBy)
      .toBe('Ines Marrow');
    await page.locator(`li.card[data-id="${id1}"] .ack.yes`).waitFor();
    expect(await page.locator(`li.card[data-id="${id1}"] .ack.yes`).textContent()).toContain(
      'Acknowledged by Ines Marrow',
    );

    const unacked = (await apiAlerts(demo.url)).filter((a) => a.status === 'active' && !a.acknowledged);
    if (unacked.length > 0) {
      const id2 = unacked[0].id;
      await page.locator(`li.card[data-id="${id2}"] button`, { hasText: 'Acknowledge' }).focus();
      await page.keyboard.press('Enter');
      await expect
        .poll(async () => (await apiAlerts(demo.url)).find((a) => a.id === id2)?.acknowledged)
        .toBe(true);
    }
    // The name is remembered for the next visit.
    expect(await page.evaluate("localStorage.getItem('streamfence.board.operator')")).toBe('Ines Marrow');
  });

  it('shelves with a required reason and a chosen duration, and unshelves', async () => {
    const card = page.locator('#active li.card').last();
    const id = (await card.getAttribute('data-id'))!;
    await card.getByRole('button', { name: 'Shelve…' }).click();
    const dialog = page.locator('#shelve-dialog');
    await dialog.waitFor({ state: 'visible' });
    // Without a reason the shelf is refused on the page.
    await page.click('#shelve-ok');
    expect(await page.locator('#shelve-error').textContent()).toMatch(/why/);
    await page.fill('#shelve-reason', 'Valve on this line is being swapped this shift');
    await page.check('input[name="shelve-minutes"][value="60"]');
    await page.click('#shelve-ok');
    await dialog.waitFor({ state: 'hidden' });
    await page.locator(`#shelved li.card[data-id="${id}"]`).waitFor();
    const a = (await apiAlerts(demo.url)).find((x) => x.id === id)!;
    expect(a).toMatchObject({
      status: 'shelved',
      shelveReason: 'Valve on this line is being swapped this shift',
    });
    const minutes = (Date.parse(a.shelvedUntil!) - Date.now()) / 60_000;
    expect(minutes).toBeGreaterThan(58);
    expect(minutes).toBeLessThanOrEqual(60);
    await page.screenshot({ path: `${ARTIFACTS}/board-shelved.png`, fullPage: true });
    mkdirSync(`${ARTIFACTS}/docs`, { recursive: true });
    await page.evaluate('window.scrollTo(0, 0)');
    await page.screenshot({ path: `${ARTIFACTS}/docs/board.png` });

    await page.locator(`#shelved li.card[data-id="${id}"]`).getByRole('button', { name: 'Unshelve' }).click();
    await page.locator(`#active li.card[data-id="${id}"]`).waitFor();
    expect((await apiAlerts(demo.url)).find((x) => x.id === id)!.status).toBe('active');
  });

  it('a shelved alert returns to the active list on the page when its shelf ends', async () => {
    const id = (await page.locator('#active li.card').first().getAttribute('data-id'))!;
    // The API accepts short shelves (0.05 min = 3 s), which keeps this test quick.
    const r = await fetch(`${demo.url}/api/alerts/${id}/shelve`, {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ by: 'Ines Marrow', reason: 'short test shelf', minutes: 0.05 }),
    });
    expect(r.status).toBe(200);
    await page.locator(`#shelved li.card[data-id="${id}"]`).waitFor({ timeout: 5_000 });
    await page.locator(`#active li.card[data-id="${id}"]`).waitFor({ timeout: 15_000 });
    expect(problems, problems.join('\n')).toEqual([]);
  });

  it('a large-type switch and a narrow screen keep the page usable', async () => {
    await page.click('#large-type');
    expect(await page.evaluate("document.documentElement.classList.contains('large')")).toBe(true);
    await page.setViewportSize({ width: 420, height: 800 });
    const width = (await page.evaluate('document.documentElement.scrollWidth')) as number;
    expect(width).toBeLessThanOrEqual(440);
    await page.screenshot({ path: `${ARTIFACTS}/board-narrow-large.png`, fullPage: true });
    await page.click('#large-type');
    await page.setViewportSize({ width: 1400, height: 900 });
  });
});

describe('board live updates in Chromium', () => {
  it('new alerts arrive on an open page without a reload (fast plant)', async () => {
    const demo = await startDemo(['--speed', '600', '--seed', '5', '--group-depth', '0']);
    const browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ARGS });
    try {
      const page = await browser.newPage();
      await page.goto(demo.url + '/');
      await page.locator('#link', { hasText: 'live' }).waitFor({ timeout: 15_000 });
      const ids = async () =>
        (await page.locator('li.card').evaluateAll((els) => els.map((e) => e.getAttribute('data-id')))).join(
          ',',
        );
      const before = await ids();
      // At 600x a plant hour passes in 6 s; faults every few plant hours per sensor change the list.
      await expect.poll(ids, { timeout: 60_000, interval: 500 }).not.toBe(before);
    } finally {
      await browser.close();
      await demo.stop();
    }
  });
});
