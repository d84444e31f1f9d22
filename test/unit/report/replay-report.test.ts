import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { validateConfig } from '../../../libs/config/config.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { esc } from '../../../libs/report/escape.js';
import { runReplay } from '../../../services/replay/replay.js';
import { createReportObserver, type ReportOptions } from '../../../libs/report/replay-report.js';
import { healthSection } from '../../../libs/report/health.js';
import { asRecords, feed, SHORT_WINDOW_CONFIG } from './data.js';

async function report(
  count: number,
  opts: ReportOptions = {},
  sensors = ['still-1/column-temp', 'still-1/reflux-flow', 'still-2/column-temp'],
) {
  const readings = feed({
    sensors,
    start: Date.UTC(2026, 5, 1),
    intervalMs: 5_000,
    count,
    seed: 3,
    spikeRate: 0.004,
  });
  const obs = createReportObserver(opts);
  const summary = await runReplay({
    source: asRecords(readings),
    config: validateConfig(SHORT_WINDOW_CONFIG),
    outDir: mkdtempSync(join(tmpdir(), 'sf-report-unit-')),
    inputInfo: {},
    observers: [obs],
  });
  return { summary, html: obs.render(summary) };
}

const elements = (html: string): number => (html.match(/<(path|rect|line|circle|text)\b/g) ?? []).length;

describe('replay report', () => {
  it('keeps the page size bounded: ten times the readings, about the same page', async () => {
    const small = await report(2_000, { maxMarkersPerSensor: 50 });
    const large = await report(20_000, { maxMarkersPerSensor: 50 });
    expect(large.summary.readings).toBe(10 * small.summary.readings);
    expect(large.summary.alerts.raised).toBeGreaterThan(small.summary.alerts.raised);
    // Bins and markers are capped, so the drawing does not grow with the readings.
    expect(elements(large.html)).toBeLessThan(elements(small.html) * 1.5 + 50);
    expect(large.html.length).toBeLessThan(small.html.length * 1.6);
    expect(large.html).toMatch(/later alert markers not drawn \(limit 50\)/);
  });

  it('shows the counts, the caution and one chart per top sensor, ranked by alerts raised', async () => {
    const { summary, html } = await report(3_000, { topN: 2 });
    expect(html).toContain(esc(NOTICE));
    expect(html.match(/<svg class="chart sensor-chart"/g)).toHaveLength(2);
    expect(html.match(/<svg class="chart rate-chart"/g)).toHaveLength(1);
    expect(html).toContain(`<td class="n">${summary.readings.toLocaleString('en-US')}</td>`);
    const headings = [...html.matchAll(/<h3>([^<]+)<\/h3>/g)].map((m) => m[1]).filter((h) => h.includes('/'));
    expect(headings).toHaveLength(2);
    // The alerts table lists sensors in the same order as the charts.
    const table = [...html.matchAll(/<tr><td>([^<]+)<\/td><td class="n">(\d+)<\/td>/g)].map((m) => [
      m[1],
      Number(m[2]),
    ]);
    const raised = table.filter(([s]) => String(s).startsWith('still-'));
    expect(raised.map(([s]) => s).slice(0, 2)).toEqual(headings);
    expect(Number(raised[0][1])).toBeGreaterThanOrEqual(Number(raised[1][1]));
  });

  it('has the alert-system health section, from the same figures as summary.json kpis', async () => {
    const { summary, html } = await report(3_000);
    expect(summary.kpis.raised).toBe(summary.alerts.raised);
    expect(html).toContain(`<h2 id="health">Alert-system health</h2>\n${healthSection(summary.kpis)}\n`);
    // The same replay renders the same bytes (no clock in the report).
    expect((await report(3_000)).html).toBe(html);
  });

  it('says when a top sensor could not be charted because of the sensor cap', async () => {
    const { html } = await report(2_000, { topN: 3, maxChartSensors: 1 });
    expect(html).toMatch(/Not charted: more than 1 sensors/);
    expect(html).toMatch(/2 sensors were not charted/);
  });
});
