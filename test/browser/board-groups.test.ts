/**
 * Grouped alerts and the token prompt on the board page, in real headless Chromium against a real
 * board server fed alert events of one asset (no simulator, so the groups are known exactly):
 * the group forms on one card with the first-out marked, and acknowledging the group (from the
 * page, and through the API) acknowledges each member. With a board token, the page asks for it in
 * its header instead of showing API text, and shows the alerts once it is given.
 * Screenshot: test-artifacts/docs/board-groups.png (the README's group image; npm run docs:images).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync } from 'node:fs';
import { chromium, type Browser, type Page } from 'playwright-core';
import { BoardHub } from '../../services/board/hub.js';
import { createBoardMetrics } from '../../services/metrics/board-metrics.js';
import { startBoardServer, type RunningBoard } from '../../services/board/server.js';
import type { AlertEvent } from '../../libs/schema/alert-event.js';
import { NOTICE } from '../../libs/schema/notice.js';
import { FIXTURE_BASELINE } from '../support/alert-fixture.js';

const ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--no-first-run',
];
const ARTIFACTS = 'test-artifacts';
const T0 = Date.parse('2026-06-03T09:00:00Z');
const TOKEN = 'glaze-line-token-2026';

function raised(
  id: string,
  sensor: string,
  minute: number,
  severity: AlertEvent['severity'] = 'warning',
): AlertEvent {
  const at = new Date(T0 + minute * 60_000).toISOString();
  return {
    id,
    sensor,
    state: 'raised',
    severity,
    reasons: ['fence_high'],
    value: 88.4,
    ts: at,
    since: at,
    flaggedReadings: 3,
    baseline: { ...FIXTURE_BASELINE },
    z: 6.2,
    robustZ: 5.1,
    percentileRank: 100,
    message: `${sensor} reads 88.4, above the upper fence`,
    notice: NOTICE,
  };
}

interface ApiAlert {
  id: string;
  acknowledged: boolean;
  acknowledgedBy: string | null;
  status: string;
}

async function startBoard(token: string | null): Promise<{ hub: BoardHub; board: RunningBoard }> {
  const clock = { wall: () => T0 + 10 * 60_000, plant: () => T0 + 10 * 60_000 };
  const hub = new BoardHub({ mode: 'live', clock, groupRule: { depth: 2, globs: [], windowMs: 5 * 60_000 } });
  const board = await startBoardServer({
    hub,
    metrics: createBoardMetrics(hub),
    host: '127.0.0.1',
    port: 0,
    token,
  });
  return { hub, board };
}

describe('board page: grouped alerts', () => {
  let browser: Browser;
  let page: Page;
  let running: { hub: BoardHub; board: RunningBoard };
  const problems: string[] = [];

  beforeAll(async () => {
    mkdirSync(`${ARTIFACTS}/docs`, { recursive: true });
    running = await startBoard(null);
    const { hub } = running;
    // Kiln 2's burner trips: gas flow goes first, flame and exhaust follow within minutes.
    hub.applyEvent(raised('b-flame', 'kiln-2/burner/flame', 2, 'critical'));
    hub.applyEvent(raised('b-gas', 'kiln-2/burner/gas-flow', 1));
    hub.applyEvent(raised('b-exhaust', 'kiln-2/burner/exhaust-temp', 4));
    // A second asset's group, acknowledged through the API below.
    hub.applyEvent(raised('f-current', 'dryer-1/fan/current', 3));
    hub.applyEvent(raised('f-vibration', 'dryer-1/fan/vibration', 5));
    // Alone: same line, other machine.
    hub.applyEvent(raised('lone', 'kiln-2/conveyor/speed', 2));
    browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ARGS });
    page = await browser.newPage({ viewport: { width: 1400, height: 1000 } });
    page.on('console', (m) => {
      if (m.type() === 'error' || m.type() === 'warning') problems.push(`${m.type()}: ${m.text()}`);
    });
    page.on('pageerror', (e) => problems.push(`pageerror: ${e.message}`));
  });

  afterAll(async () => {
    await browser?.close();
    await running?.board.close();
  });

  it('shows one card per group with the first-out marked and the others listed', async () => {
    await page.goto(running.board.url + '/');
    const kiln = page.locator('#active li.card.group[data-group="b-gas"]');
    await kiln.waitFor({ timeout: 30_000 });
    expect(await kiln.locator('.head .sensor').first().textContent()).toBe('kiln-2/burner');
    const firstOut = kiln.locator('li.card.first-out');
    expect(await firstOut.getAttribute('data-id')).toBe('b-gas');
    expect(await firstOut.locator('.first-out-tag').textContent()).toBe('FIRST-OUT');
    expect(
      await kiln.locator('li.member').evaluateAll((rows) => rows.map((r) => r.getAttribute('data-id'))),
    ).toEqual(['b-flame', 'b-exhaust']);
    // The critical member makes the whole card critical.
    expect(await kiln.getAttribute('class')).toContain('critical');
    expect(await page.locator('#active li.card.group').count()).toBe(2);
    // The lone alert keeps its own card, and no alert appears twice.
    expect(await page.locator('#active > li.card[data-id="lone"]').count()).toBe(1);
    expect(await page.locator('#active [data-id="b-flame"]').count()).toBe(1);
    await page.screenshot({ path: `${ARTIFACTS}/docs/board-groups.png` });
  });

  it('acknowledging the group from the page acknowledges each member', async () => {
    await page.fill('#operator', 'Dalia Ferreira-Holm');
    await page
      .locator('li.card.group[data-group="b-gas"] .group-actions button', { hasText: 'Acknowledge all 3' })
      .click();
    await expect
      .poll(async () => {
        const list = (await (await fetch(running.board.url + '/api/alerts')).json()) as ApiAlert[];
        return list
          .filter((a) => a.id.startsWith('b-'))
          .map((a) => `${a.id}:${a.acknowledgedBy}`)
          .sort();
      })
      .toEqual(['b-exhaust:Dalia Ferreira-Holm', 'b-flame:Dalia Ferreira-Holm', 'b-gas:Dalia Ferreira-Holm']);
    const kiln = page.locator('li.card.group[data-group="b-gas"]');
    await expect.poll(() => kiln.locator('.ack.yes').count()).toBe(3);
    expect(await page.locator('#message').textContent()).toContain('the group of kiln-2/burner (3 alerts)');
    const lone = (await (await fetch(running.board.url + '/api/alerts')).json()) as ApiAlert[];
    expect(lone.find((a) => a.id === 'lone')!.acknowledged).toBe(false);
  });

  it('acknowledging the group through the API shows on the page for each member', async () => {
    const res = await fetch(running.board.url + '/api/groups/f-current/acknowledge', {
      method: 'POST',
      headers: { 'content-type': 'application/json' },
      body: JSON.stringify({ by: 'Kwame Ostrowski' }),
    });
    expect(res.status).toBe(200);
    const body = (await res.json()) as { alerts: ApiAlert[] };
    expect(body.alerts.map((a) => `${a.id}:${a.acknowledgedBy}`)).toEqual([
      'f-current:Kwame Ostrowski',
      'f-vibration:Kwame Ostrowski',
    ]);
    const fan = page.locator('li.card.group[data-group="f-current"]');
    await expect.poll(() => fan.locator('.ack.yes').count(), { timeout: 15_000 }).toBe(2);
    expect(await fan.locator('.group-actions button', { hasText: 'Acknowledge' }).count()).toBe(0);
  });

  it('shelving the group from the page moves every member to Shelved as one group card', async () => {
    await page
      .locator('li.card.group[data-group="b-gas"] .group-actions button', { hasText: 'Shelve group' })
      .click();
    await page.fill('#shelve-reason', 'burner relight in progress');
    await page.click('#shelve-ok');
    await page.locator('#shelved li.card.group[data-group="b-gas"]').waitFor({ timeout: 15_000 });
    const list = (await (await fetch(running.board.url + '/api/alerts')).json()) as ApiAlert[];
    expect(list.filter((a) => a.id.startsWith('b-')).map((a) => a.status)).toEqual([
      'shelved',
      'shelved',
      'shelved',
    ]);
    expect(problems).toEqual([]);
  });
});

describe('board page: token prompt off loopback', () => {
  let browser: Browser;
  let running: { hub: BoardHub; board: RunningBoard };

  beforeAll(async () => {
    running = await startBoard(TOKEN);
    running.hub.applyEvent(raised('t1', 'kiln-4/zone-2/temp', 1));
    browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ARGS });
  });
  afterAll(async () => {
    await browser?.close();
    await running?.board.close();
  });

  it('asks for the token in the header, shows no API text, and loads and acts once it is given', async () => {
    const page = await browser.newPage({ viewport: { width: 1200, height: 800 } });
    await page.goto(running.board.url + '/');
    const prompt = page.locator('#token-prompt');
    await prompt.waitFor({ state: 'visible', timeout: 30_000 });
    expect(await prompt.textContent()).toMatch(/needs its token/);
    expect(await page.locator('#token').isVisible()).toBe(true);
    expect(await page.evaluate('document.activeElement && document.activeElement.id')).toBe('token');
    const body = (await page.locator('body').textContent()) ?? '';
    expect(body).not.toMatch(/Authorization|Bearer/);
    expect(await page.locator('#active li.card').count()).toBe(0);
    await page.screenshot({ path: `${ARTIFACTS}/board-token-prompt.png` });

    await page.fill('#token', 'not-the-token-at-all');
    await page.press('#token', 'Enter');
    await expect.poll(() => prompt.textContent()).toMatch(/not accepted/);

    await page.fill('#token', TOKEN);
    await page.press('#token', 'Enter');
    await page.locator('#active li.card[data-id="t1"]').waitFor({ timeout: 15_000 });
    expect(await prompt.isVisible()).toBe(false);
    await expect.poll(() => page.locator('#link').textContent(), { timeout: 15_000 }).toBe('live');
    await page.locator('#active li.card[data-id="t1"] button', { hasText: 'Acknowledge' }).click();
    await expect.poll(() => running.hub.store.get('t1')?.acknowledged, { timeout: 15_000 }).toBe(true);
    // A new event reaches the page through the token-carrying event stream.
    running.hub.applyEvent(raised('t2', 'kiln-4/zone-3/temp', 2));
    await page.locator('#active li.card[data-id="t2"]').waitFor({ timeout: 15_000 });
    await page.close();
  });
});
