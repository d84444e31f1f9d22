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
import { alertKpis, type KpiEvent } from '../../libs/kpi/alert-kpis.js';
import { recallFirst, recommend, type Scored } from '../../libs/tuning/recommend.js';
import { renderTuneReport, type TuningDoc, type TunePointDoc } from '../../libs/report/tune-report.js';
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
  const all = points();
  return {
    input: { path: 'kiln-week.ndjson', readings: 120_960, sensors: 12, hours: 168 },
    labels: { incidents: 31 },
    scoring: { floodWindowMs: 600_000, floodLimit: 10 },
    budgetPerHour: 6,
    points: all,
    recommended: {
      ...all[recommend(all, 6)!.index],
      reason: 'fewest raised alerts per caught incident among the points near the best recall',
      kpis: alertKpis(kilnEvents(), { start: Date.UTC(2026, 1, 2), end: Date.UTC(2026, 1, 9) }),
    },
    recallFirstIndex: recallFirst(all, 6),
  };
}

/** The invented grid: fenceK 1.5-3 by raiseAfter 1-3. */
function points(): (TunePointDoc & Scored)[] {
  const points: (TunePointDoc & Scored)[] = [];
  for (const fenceK of [1.5, 2, 2.5, 3]) {
    for (const raiseAfter of [1, 2, 3]) {
      const alertsPerHour = 40 / (fenceK * fenceK * raiseAfter);
      const clearDelay = fenceK === 2 || fenceK === 3 ? 600_000 : 0;
      points.push({
        index: points.length,
        raised: 100,
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
          deadband: raiseAfter === 3 ? 0.5 : 0,
          clearDelay,
        },
        // A clear delay costs a little recall and saves most repeated raises.
        recall: 0.95 - 0.08 * (fenceK - 1.5) - 0.05 * (raiseAfter - 1) - (clearDelay > 0 ? 0.01 : 0),
        precision: Math.min(1, 0.15 * fenceK * raiseAfter),
        alertsPerHour,
        worst10min: Math.round(alertsPerHour * 0.7),
        flood: Math.round(alertsPerHour * 0.7) > 10,
        alertsPerCaught: clearDelay > 0 ? 1.05 + 0.05 * (3 - raiseAfter) : 1.4 + 0.9 / raiseAfter,
        raisesPerCaught: clearDelay > 0 ? 1.02 : 1.2 + 0.6 / raiseAfter,
        chatteringRaises: raiseAfter === 1 ? Math.round(12 / fenceK) : 0,
        recallByKind: { spike: Math.max(0, 1 - 0.1 * fenceK), step: Math.max(0, 0.9 - 0.05 * raiseAfter) },
      });
    }
  }
  return points;
}

/** Invented alert events of a kiln line over a week: a few raises and clears, one chattering sensor. */
function kilnEvents(): KpiEvent[] {
  const day = 86_400_000;
  const start = Date.UTC(2026, 1, 2);
  const events: KpiEvent[] = [];
  const alert = (sensor: string, at: number, lasts: number) => {
    const id = `${sensor}@${at}`;
    events.push({ id, sensor, state: 'raised', ts: at, since: at });
    events.push({ id, sensor, state: 'cleared', ts: at + lasts, since: at });
  };
  for (let d = 0; d < 7; d++) alert('kiln-2/zone-3-temp', start + d * day + 9 * 3_600_000, 40 * 60_000);
  for (const s of [0, 20, 45]) alert('kiln-2/draught-fan-current', start + 3 * day + s * 1000, 5_000);
  alert('kiln-2/feed-rate', start + 5 * day, 3 * 3_600_000);
  events.sort((a, b) => a.ts - b.ts);
  return events;
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
    // The trade-off chart: one marker per point (squares for floods), the two picks marked.
    const tradeoff = await charts(page, 'svg.tradeoff-chart');
    expect(tradeoff).toHaveLength(1);
    expect(tradeoff[0].w).toBeGreaterThan(300);
    const floods = points().filter((p) => p.flood).length;
    expect(floods).toBeGreaterThan(0);
    expect(await page.locator('svg.tradeoff-chart rect.pt').count()).toBe(floods);
    expect(await page.locator('svg.tradeoff-chart circle.pt').count()).toBe(12 - floods);
    expect(await page.locator('svg.tradeoff-chart circle.ring').count()).toBe(1);
    expect(await page.locator('svg.tradeoff-chart rect.pick-box').count()).toBe(1);
    // The invented grid's trade-off: the rule takes fenceK 2 with a clear delay (1.1 raised per caught
    // incident) over the recall-first pick fenceK 1.5 (same recall 85 %, better precision, 1.7).
    expect(await page.locator('p.note', { hasText: 'would pick' }).innerText()).toMatch(
      /would pick fenceK=1.5 outerK=3 raiseAfter=3 deadband=0.5 clearDelay=0ms: recall 85.0 %.* 1.7 raised per caught incident/,
    );
    // The recommended point's health figures, with their verdicts; the table shows the noise columns.
    expect(
      await page.locator('h2', { hasText: 'Alert-system health of the recommended point' }).count(),
    ).toBe(1);
    expect(await page.locator('.health span.verdict').count()).toBe(11);
    expect(await page.locator('th', { hasText: 'raised per caught' }).count()).toBe(1);
    await page.screenshot({ path: join(ARTIFACTS, 'report-tune.png'), fullPage: true });
    mkdirSync(join(ARTIFACTS, 'docs'), { recursive: true });
    await page
      .locator('svg.tradeoff-chart')
      .screenshot({ path: join(ARTIFACTS, 'docs', 'report-tradeoff.png') });
    expect(errors).toEqual([]);
    await page.close();
  });
});
