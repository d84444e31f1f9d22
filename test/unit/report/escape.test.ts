import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { validateConfig } from '../../../libs/config/config.js';
import { NOTICE } from '../../../libs/schema/notice.js';
import { esc } from '../../../libs/report/escape.js';
import { runReplay } from '../../../services/replay/replay.js';
import { createReportObserver } from '../../../libs/report/replay-report.js';
import { renderTuneReport } from '../../../libs/report/tune-report.js';
import { asRecords, feed, SHORT_WINDOW_CONFIG } from './data.js';

const EVIL = '<script>alert("x")</script>&\'';

describe('report escaping', () => {
  it('escapes the five HTML-significant characters', () => {
    expect(esc(EVIL)).toBe('&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;&amp;&#39;');
  });

  it('a sensor id with markup cannot inject into the replay report', async () => {
    const readings = feed({
      sensors: [EVIL, 'press-4/oil-temp'],
      start: Date.UTC(2026, 3, 1),
      intervalMs: 10_000,
      count: 400,
      seed: 5,
      spikeRate: 0.03,
    });
    const obs = createReportObserver({ topN: 2, audit: true });
    const summary = await runReplay({
      source: asRecords(readings),
      config: validateConfig(SHORT_WINDOW_CONFIG),
      outDir: mkdtempSync(join(tmpdir(), 'sf-report-esc-')),
      inputInfo: {},
      observers: [obs],
    });
    expect(summary.alerts.raised).toBeGreaterThan(0);
    const html = obs.render(summary);
    expect(html.toLowerCase()).not.toContain('<script');
    expect(html).toContain(esc(EVIL));
    // The evil sensor appears in the alerts table, as a chart heading and in the audit table.
    expect(html.split(esc(EVIL)).length - 1).toBeGreaterThanOrEqual(3);
    expect(html).toContain(esc(NOTICE));
  });

  it('tuning values with markup cannot inject into the tune report', () => {
    const html = renderTuneReport({
      points: [
        {
          settings: { fenceK: 1.5, note: '"><img src=x onerror=alert(1)>' },
          recall: 0.5,
          precision: 0.5,
          alertsPerHour: 2,
        },
      ],
      recommended: { index: 0, reason: '</p><iframe src="x">' },
    });
    expect(html).not.toMatch(/<img|<iframe/i);
    expect(html).toContain(esc(NOTICE));
  });
});
