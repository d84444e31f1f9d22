/**
 * The HTML reports in real headless Chromium: a replay report and a tune report are generated from
 * invented data, opened from disk, and checked for drawn charts (SVG with non-zero size and real
 * path data), the visible caution and no console errors. Screenshots go to test-artifacts/ only;
 * test-artifacts/docs/report.png and report-health.png are the README's images, which `npm run docs:images` copies to
 * deploy/docs/.
 */
import { mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { validateConfig } from '../../libs/config/config.js';
import { NOTICE } from '../../libs/schema/notice.js';
import { runReplay } from '../../services/replay/replay.js';
import { createReportObserver } from '../../libs/report/replay-report.js';
import { renderTuneReport, type TuningDoc } from '../../libs/report/tune-report.js';
import { writeReport } from '../../services/report/write.js';
import { asRecords, feed } from '../unit/report/data.js';

const ARGS = [
  '--headless',
  '--no-sandbox',
  '--disable-gpu',
  '--disable-background-networking',
  '--disable-component-update',
  '--disable-sync',
  '--no-first-run',
];
const ARTIFACTS = resolve('test-artifacts');

/** An invented boiler-house feed: six sensors over three days with planted spikes and one level step. */
async function replayReport(dir: string): Promise<string> {
  const sensors = [
    'boiler-house/feedwater-temp',
    'boiler-house/drum-level',
    'boiler-house/stack-o2',
    'pump-3/discharge-pressure',
    'pump-3/vibration',
    'pump-4/vibration',
  ];
  const readings = feed({
    sensors,
    start: Date.UTC(2026, 1, 9),
    intervalMs: 60_000,
    count: 3 * 1440,
    seed: 17,
    spikeRate: 0.0015,
    stepAt: 2900,
  });
  const obs = createReportObserver({ topN: 3, audit: true });
  const summary = await runReplay({
    source: asRecords(readings),
    config: validateConfig({ defaults: { window: '6h', buckets: 12, minSamples: 60, clearAfter: 5 } }),
    outDir: dir,
    inputInfo: { path: 'boiler-house.ndjson' },
    observers: [obs],
  });
  expect(summary.alerts.raised).toBeGreaterThan(3);
  return writeReport(dir, obs.render(summary));
}

/** A small synthetic tuning.json in the shape the tune command writes (values invented). */
function tuning(): TuningDoc {
  const points = [];
  for (const fenceK of [1.5, 2, 2.5, 3]) {
    for (const raiseAfter of [1, 2, 3]) {
      const alertsPerHour = 40 / (fenceK * fenceK * raiseAfter);
      points.push({
        index: points.length,
        settings: {
          fenceK,
          outerK: fenceK * 2,
          zLimit: 3,
          zCritical: 5,
          trigger: 'either',
          raiseAfter,
          raiseWindow: 3,
          clearAfter: 3,
          flatlineAfter: 60,
        },
        recall: Math.max(0, 1 - 0.12 * fenceK - 0.06 * raiseAfter),
        precision: Math.min(1, 0.15 * fenceK * raiseAfter),
        alertsPerHour,
        worst10min: Math.round(alertsPerHour / 2),
        flood: alertsPerHour / 2 > 10,
        recallByKind: { spike: Math.max(0, 1 - 0.1 * fenceK), step: Math.max(0, 0.9 - 0.05 * raiseAfter) },
      });
    }
  }
  return {
    input: { path: 'kiln-week.ndjson', readings: 120_960, sensors: 12, hours: 168 },
    labels: { incidents: 31 },
    scoring: { floodWindowMs: 600_000, floodLimit: 10 },
    budgetPerHour: 6,
    points,
    recommended: { ...points[4], reason: 'highest recall with the alert rate within the budget' },
  };
}

async function open(browser: Browser, file: string, errors: string[]): Promise<Page> {
  const page = await browser.newPage({ viewport: { width: 1100, height: 900 } });
  page.on('console', (m) => {
    if (m.type() === 'error') errors.push(m.text());
  });
  page.on('pageerror', (e) => errors.push(e.message));
  await page.goto(pathToFileURL(file).href);
  return page;
}

/** Sizes of the page's chart SVGs and how much path data each draws. */
async function charts(page: Page, selector: string): Promise<{ w: number; h: number; drawn: number }[]> {
  return page.$$eval(selector, (els) =>
    els.map((e) => {
      const r = e.getBoundingClientRect();
      let drawn = 0;
      e.querySelectorAll('path, rect.bar, circle').forEach(
        (p: { getAttribute(name: string): string | null; tagName: string }) => {
          drawn += (p.getAttribute('d') ?? '').length + (p.tagName === 'path' ? 0 : 1);
        },
      );
      return { w: r.width, h: r.height, drawn };
    }),
  );
}

describe('HTML reports in Chromium', () => {
  let browser: Browser;
  const dir = mkdtempSync(join(tmpdir(), 'sf-report-browser-'));

  beforeAll(async () => {
    mkdirSync(ARTIFACTS, { recursive: true });
    browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: ARGS });
  });

  afterAll(async () => {
    await browser?.close();
  });

  it('draws the replay report charts with no console error', async () => {
    const file = await replayReport(dir);
    const html = readFileSync(file, 'utf8');
    // Self-contained: no script, no stylesheet link, nothing loaded from elsewhere.
    expect(html).not.toMatch(/<script|<link|(src|href)\s*=\s*["']?https?:/i);
    const errors: string[] = [];
    const page = await open(browser, file, errors);
    expect(await page.locator('#notice').innerText()).toContain(NOTICE);
    expect(await page.locator('#notice').isVisible()).toBe(true);
    const sensorCharts = await charts(page, 'svg.sensor-chart');
    expect(sensorCharts).toHaveLength(3);
    for (const c of sensorCharts) {
      expect(c.w).toBeGreaterThan(300);
      expect(c.h).toBeGreaterThan(100);
      expect(c.drawn).toBeGreaterThan(1000);
    }
    const rate = await charts(page, 'svg.rate-chart');
    expect(rate).toHaveLength(1);
    expect(rate[0].w).toBeGreaterThan(300);
    expect(rate[0].drawn).toBeGreaterThan(0);
    // Readings band, fence bands and median line have real extent on screen.
    const band = await page.locator('svg.sensor-chart path.readings').first().boundingBox();
    expect(band!.width).toBeGreaterThan(300);
    const inner = await page.locator('svg.sensor-chart path.fence-inner').first().boundingBox();
    expect(inner!.width).toBeGreaterThan(200);
    expect(await page.locator('svg.sensor-chart path.mark.raised').count()).toBeGreaterThan(0);
    expect(await page.locator('h2', { hasText: 'Sketch audit' }).count()).toBe(1);
    await page.screenshot({ path: join(ARTIFACTS, 'report-replay.png'), fullPage: true });
    await page
      .locator('svg.sensor-chart')
      .first()
      .screenshot({ path: join(ARTIFACTS, 'report-replay-chart.png') });
    // The top sensors' charts: what a reader of the README should see.
    // Page coordinates (boundingBox() is relative to the scrolled viewport).
    const [top, bottom] = await page.evaluate(() => {
      const doc = globalThis as unknown as {
        scrollY: number;
        document: {
          querySelectorAll(s: string): ArrayLike<{
            textContent: string | null;
            getBoundingClientRect(): { top: number; bottom: number };
          }>;
        };
      };
      const heads = Array.from(doc.document.querySelectorAll('h2')).filter((h) =>
        (h.textContent ?? '').startsWith('Top '),
      );
      const svgs = doc.document.querySelectorAll('svg.sensor-chart');
      return [
        heads[0].getBoundingClientRect().top + doc.scrollY,
        svgs[1].getBoundingClientRect().bottom + doc.scrollY,
      ];
    });
    mkdirSync(join(ARTIFACTS, 'docs'), { recursive: true });
    await page.screenshot({
      path: join(ARTIFACTS, 'docs', 'report.png'),
      clip: { x: 0, y: top - 10, width: 1100, height: bottom - top + 20 },
      fullPage: true,
    });
    // The health section: each figure's verdict in words beside a drawn shape, the README's image.
    const health = page.locator('h2#health');
    expect(await health.count()).toBe(1);
    const verdicts = await page.locator('.health span.verdict').allInnerTexts();
    expect(verdicts).toHaveLength(11);
    for (const v of verdicts) expect(['met', 'NOT MET', 'not judged']).toContain(v.trim());
    const shape = await page.locator('.health span.verdict svg').first().boundingBox();
    expect(shape!.width).toBeGreaterThan(10);
    const [healthTop, healthBottom] = await page.evaluate(() => {
      const doc = globalThis as unknown as {
        scrollY: number;
        document: {
          getElementById(id: string): { getBoundingClientRect(): { top: number } };
          querySelectorAll(s: string): ArrayLike<{ getBoundingClientRect(): { bottom: number } }>;
        };
      };
      const tables = doc.document.querySelectorAll('#health ~ table');
      return [
        doc.document.getElementById('health').getBoundingClientRect().top + doc.scrollY,
        tables[0].getBoundingClientRect().bottom + doc.scrollY,
      ];
    });
    await page.screenshot({
      path: join(ARTIFACTS, 'docs', 'report-health.png'),
      clip: { x: 0, y: healthTop - 10, width: 1100, height: healthBottom - healthTop + 20 },
      fullPage: true,
    });
    expect(errors).toEqual([]);
    await page.close();
  });

  it('draws the tune report chart with no console error', async () => {
    const file = join(dir, 'tune-report.html');
    writeFileSync(file, renderTuneReport(tuning()));
    const errors: string[] = [];
    const page = await open(browser, file, errors);
    expect(await page.locator('#notice').innerText()).toContain(NOTICE);
    const c = await charts(page, 'svg.tune-chart');
    expect(c).toHaveLength(1);
    expect(c[0].w).toBeGreaterThan(300);
    expect(await page.locator('svg.tune-chart circle.pt').count()).toBe(12);
    expect(await page.locator('svg.tune-chart circle.pt.recommended').count()).toBe(1);
    expect(await page.locator('tr.pick').count()).toBe(1);
    // The recommended row is the point with index 4 (fenceK 2, raiseAfter 2); shared settings are not columns.
    expect(await page.locator('tr.pick td').first().innerText()).toBe('2');
    expect(await page.locator('table').nth(1).locator('th').allInnerTexts()).not.toContain('zLimit');
    await page.screenshot({ path: join(ARTIFACTS, 'report-tune.png'), fullPage: true });
    expect(errors).toEqual([]);
    await page.close();
  });
});
