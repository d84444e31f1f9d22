/**
 * The board's compact alert-system health view in real headless Chromium, against a real board
 * server fed a known stream of alert events (no simulator, so every figure is known exactly):
 * over two hours of plant time a conveyor sensor raises three times within 40 s, each cleared
 * 20 s later (chattering and fleeting), and a second sensor raises once and stays open. The page
 * shows each figure with its verdict in words and a shape, the target on hover, and the same
 * figures as `/api/board` `health`. Screenshot: test-artifacts/board-health.png.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdirSync } from 'node:fs';
import { chromium, type Browser, type Page } from 'playwright-core';
import { BoardHub } from '../../services/board/hub.js';
import { createBoardMetrics } from '../../services/metrics/board-metrics.js';
import { startBoardServer, type RunningBoard } from '../../services/board/server.js';
import type { BoardHealth } from '../../libs/board/health.js';
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
const T0 = Date.parse('2026-06-03T06:00:00Z');
const NOW = T0 + 2 * 3_600_000;

function event(
  id: string,
  sensor: string,
  state: 'raised' | 'cleared',
  atSec: number,
  sinceSec: number,
): AlertEvent {
  return {
    id,
    sensor,
    state,
    severity: 'warning',
    reasons: state === 'raised' ? ['fence_high'] : [],
    value: 41.2,
    ts: new Date(T0 + atSec * 1000).toISOString(),
    since: new Date(T0 + sinceSec * 1000).toISOString(),
    flaggedReadings: 2,
    baseline: { ...FIXTURE_BASELINE },
    z: 4.1,
    robustZ: 3.9,
    percentileRank: 100,
    message: `${sensor} reads 41.2, above the upper fence`,
    notice: NOTICE,
  };
}

describe('board page: alert-system health', () => {
  let browser: Browser;
  let page: Page;
  let board: RunningBoard;
  const problems: string[] = [];

  beforeAll(async () => {
    mkdirSync('test-artifacts', { recursive: true });
    // The board starts at T0 and the events arrive over the next two hours of plant time.
    let now = T0;
    const hub = new BoardHub({ mode: 'live', clock: { wall: () => now, plant: () => now } });
    for (const [n, at] of [0, 20, 40].entries()) {
      const base = 3600 + at;
      hub.applyEvent(event(`c${n}`, 'packing-3/conveyor/belt-speed', 'raised', base, base));
      hub.applyEvent(event(`c${n}`, 'packing-3/conveyor/belt-speed', 'cleared', base + 10, base));
    }
    hub.applyEvent(event('open', 'packing-3/sealer/jaw-temp', 'raised', 5400, 5400));
    now = NOW;
    board = await startBoardServer({
      hub,
      metrics: createBoardMetrics(hub),
      host: '127.0.0.1',
      port: 0,
      token: null,
    });
    browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ARGS });
    page = await browser.newPage({ viewport: { width: 1400, height: 900 } });
    page.on('console', (m) => {
      if (m.type() === 'error' || m.type() === 'warning') problems.push(`${m.type()}: ${m.text()}`);
    });
    page.on('pageerror', (e) => problems.push(`pageerror: ${e.message}`));
  });

  afterAll(async () => {
    await browser?.close();
    await board?.close();
  });

  it('the API carries the figures: 4 raised over 2 h, one chattering sensor, three fleeting alerts', async () => {
    const snapshot = (await (await fetch(`${board.url}/api/board`)).json()) as { health: BoardHealth };
    const h = snapshot.health;
    expect({ from: h.from, to: h.to, hours: h.hours, raised: h.raised }).toEqual({
      from: new Date(T0).toISOString(),
      to: new Date(NOW).toISOString(),
      hours: 2,
      raised: 4,
    });
    const byFigure = Object.fromEntries(h.figures.map((f) => [f.figure, [f.shown, f.verdict]]));
    // 4 raised / 2 h = 2.0/h (target about 6/h); the three conveyor raises share 10 minutes (the
    // sealer's comes 30 minutes later); no period over 10.
    expect(byFigure).toEqual({
      'perHour.average': ['2.0/h', 'met'],
      worst10min: ['3', 'met'],
      'flood.share': ['0.0 %', 'met'],
      'chattering.sensors': ['1', 'not-met'],
      fleeting: ['3', 'not-met'],
      'stale.count': ['0', 'met'],
      'top.share': ['100.0 %', 'not-met'],
    });
    expect([h.met, h.judged]).toEqual([4, 7]);
  });

  it('the page shows each figure with its verdict in words and a shape, the target on hover', async () => {
    await page.goto(`${board.url}/`);
    const strip = page.locator('#health');
    await strip.locator('li.kpi').first().waitFor({ timeout: 30_000 });
    expect(await strip.locator('h2').textContent()).toBe('Alert-system health');
    expect(await strip.locator('.muted').first().textContent()).toBe(
      'since the board started, 2.00 h · 4 raised · 4 of 7 targets met',
    );
    const chatter = strip.locator('li.kpi[data-figure="chattering.sensors"]');
    expect(await chatter.getAttribute('class')).toBe('kpi not-met');
    expect(await chatter.innerText()).toMatch(/chattering sensors\s*1\s*NOT MET/);
    expect(await chatter.getAttribute('title')).toBe(
      'target: zero (each one gets an action plan) (ISA-18.2 / IEC 62682)',
    );
    const rate = strip.locator('li.kpi[data-figure="perHour.average"]');
    expect(await rate.innerText()).toMatch(/raised per hour\s*2\.0\/h\s*met/);
    const shape = await rate.locator('svg').boundingBox();
    expect(shape!.width).toBeGreaterThan(8);
    expect(await strip.locator('li.kpi.not-met').count()).toBe(3);
    // The caution stays on screen with the strip.
    expect(await page.locator('#caution').isVisible()).toBe(true);
    await page.screenshot({ path: 'test-artifacts/board-health.png' });
    expect(problems).toEqual([]);
  });
});
