/**
 * The replay report: a replay observer (a ReportCollector, see replay-collector.ts) gathers the
 * figures while the readings stream past, and `render(summary)` draws one self-contained
 * report.html from them at the end.
 */
import type { ReplayObserver, ReplaySummary } from '../schema/replay.js';
import type { AuditResult, ReportOptions } from './replay-collector.js';
import { FLOOD, ReportCollector, type SensorAlertCount } from './replay-collector.js';
import { hourBars } from './hourly.js';
import { markerShape, rateChart, sensorChart } from './charts.js';
import { esc } from './escape.js';
import { healthSection } from './health.js';
import { page, table, type Cell } from './html.js';
import { fmtNum, markerPath } from './svg.js';

export { FLOOD, REPORT_DEFAULTS, type AuditResult, type ReportOptions } from './replay-collector.js';

/** A replay observer that collects the report's figures and renders report.html at the end. */
export type ReportObserver = ReplayObserver & {
  render(summary: ReplaySummary): string;
  /** Audit numbers (null when the audit is off); available after onEnd. */
  auditResult(): AuditResult | null;
};

/** Most bars on the alert-rate chart; longer spans group whole hours per bar. */
const RATE_BARS = 168;

/** The replay report: pass it to runReplay as an observer, then `render(summary)`. */
export function createReportObserver(options: ReportOptions = {}): ReportObserver {
  const collector = new ReportCollector(options);
  return {
    onReading: (reading, outcome, engine) => collector.onReading(reading, outcome, engine),
    onEnd: (engine) => collector.onEnd(engine),
    auditResult: () => collector.auditResult(),
    render: (summary) => renderReplayReport(summary, collector),
  };
}

/** Sensors by alerts raised, then critical raises, then id (so ties are stable). */
type RankedSensors = [string, SensorAlertCount][];

const LEGEND_SHAPES: { label: string; cls: string; shape: 'triangle' | 'diamond' | 'circle' | 'dot' }[] = [
  {
    label: 'raised, warning',
    cls: 'mark raised warning',
    shape: markerShape({ ts: 0, value: 0, state: 'raised', severity: 'warning' }),
  },
  {
    label: 'raised, critical',
    cls: 'mark raised critical',
    shape: markerShape({ ts: 0, value: 0, state: 'raised', severity: 'critical' }),
  },
  { label: 'updated', cls: 'mark updated warning', shape: 'dot' },
  { label: 'cleared', cls: 'mark cleared warning', shape: 'circle' },
];

function legend(): string {
  const swatch = (cls: string, d: string): string =>
    `<svg class="swatch" width="26" height="14" viewBox="0 0 26 14"><path class="${cls}" d="${d}"/></svg>`;
  const rect = 'M1 3H25V11H1Z';
  const items = [
    `<span>${swatch('readings', rect)}readings (min to max per time bin)</span>`,
    `<span>${swatch('median', 'M1 7H25')}baseline median</span>`,
    `<span>${swatch('fence-inner', rect)}inner fences</span>`,
    `<span>${swatch('fence-outer', rect)}outer fences</span>`,
    ...LEGEND_SHAPES.map((l) => `<span>${swatch(l.cls, markerPath(l.shape, 13, 7))}${esc(l.label)}</span>`),
  ];
  return `<div class="legend">${items.join('')}</div>`;
}

function renderReplayReport(summary: ReplaySummary, collected: ReportCollector): string {
  const ranked = rankSensors(collected);
  const top = ranked.slice(0, collected.options.topN);
  const body = [
    '<h2>Summary</h2>',
    `<p>Event time: ${esc(spanText(collected.span))}. Engine ${esc(summary.engineVersion)}.</p>`,
    overviewTable(summary),
    '<h3>Rejected lines by reason</h3>',
    rejectsTable(summary),
    '<h2>Alert rate</h2>',
    rateSection(summary, collected),
    '<h2 id="health">Alert-system health</h2>',
    healthSection(summary.kpis),
    '<h2>Alerts by sensor</h2>',
    alertsBySensorTable(ranked, collected.options.topN),
    `<h2>Top ${esc(top.length)} sensors by alerts raised</h2>`,
    top.length === 0
      ? '<p>No sensor raised an alert, so no sensor chart is drawn.</p>'
      : legend() + sensorCharts(top, collected),
    collected.auditResult() === null ? '' : renderAudit(collected.auditResult()!),
    '<h2>About this report</h2>',
    limitsNote(collected),
  ].join('\n');
  return page(
    'streamfence replay report',
    `${summary.readings} readings from ${summary.sensors} sensors`,
    body,
  );
}

function spanText(span: { from: number; to: number }): string {
  return span.from <= span.to
    ? `${new Date(span.from).toISOString()} to ${new Date(span.to).toISOString()}`
    : 'no readings';
}

function overviewTable(summary: ReplaySummary): string {
  return table(
    ['', 'count'],
    [
      ['readings accepted', summary.readings],
      ['rejected', summary.rejected.total],
      ['sensors', summary.sensors],
      ['evaluated (baseline warm)', summary.evaluated],
      ['flagged by a fence', summary.flagged.fence],
      ['flagged by an outer fence', summary.flagged.outerFence],
      ['flagged by z', summary.flagged.z],
      ['flagged (after trigger rule)', summary.flagged.any],
      ['alerts raised', summary.alerts.raised],
      ['alerts updated', summary.alerts.updated],
      ['alerts cleared', summary.alerts.cleared],
      ['alerts still raised at the end', summary.activeAtEnd],
    ],
    { numeric: [1] },
  );
}

function rejectsTable(summary: ReplaySummary): string {
  const rows = Object.entries(summary.rejected.byReason).map(([reason, lines]): Cell[] => [reason, lines]);
  return rows.length === 0
    ? '<p>No line was rejected.</p>'
    : table(['reason', 'lines'], rows, { numeric: [1] });
}

function rankSensors(collected: ReportCollector): RankedSensors {
  return [...collected.counts.entries()].sort(
    (a, b) =>
      b[1].raised - a[1].raised || b[1].critical - a[1].critical || (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0),
  );
}

function alertsBySensorTable(ranked: RankedSensors, topN: number): string {
  const rows = ranked
    .slice(0, Math.max(topN, 20))
    .map(([sensor, count]): Cell[] => [sensor, count.raised, count.critical, count.updated, count.cleared]);
  if (rows.length === 0) return '<p>No alert was raised.</p>';
  const more =
    ranked.length > rows.length
      ? `<p class="note">${ranked.length - rows.length} more sensors raised alerts.</p>`
      : '';
  return (
    table(['sensor', 'raised', 'of which critical', 'updated', 'cleared'], rows, { numeric: [1, 2, 3, 4] }) +
    more
  );
}

function rateSection(summary: ReplaySummary, collected: ReportCollector): string {
  const { span, worst10 } = collected;
  const budgetPerHour = collected.options.budgetPerHour;
  const hours = span.from < span.to ? (span.to - span.from) / 3_600_000 : 0;
  const floodPerHour = (FLOOD.limit * 3_600_000) / FLOOD.windowMs;
  const worstEnd = Number.isFinite(worst10.endTs)
    ? ` (ending ${esc(new Date(worst10.endTs).toISOString())})`
    : '';
  return [
    `<p>${esc(summary.alerts.raised)} alerts raised over ${esc(fmtNum(hours))} h of event time (${esc(fmtNum(hours > 0 ? summary.alerts.raised / hours : 0))}/h on average); budget ${esc(fmtNum(budgetPerHour))}/h. ` +
      `Worst 10 minutes: ${esc(worst10.count)} raised${worstEnd}; a flood is more than ${FLOOD.limit} within ${FLOOD.windowMs / 60_000} minutes (common practice).</p>`,
    rateChart({ bars: hourBars(collected.rate, span.from, span.to, RATE_BARS), budgetPerHour, floodPerHour }),
    `<p class="note">Bars: alerts raised in each clock hour (UTC) across the whole data span; when the span has more than ${RATE_BARS} hours a bar groups several hours and shows its busiest hour. Bars over the budget are shaded differently. The flood line (${floodPerHour}/h) is drawn only when it falls inside the scale.</p>`,
  ].join('\n');
}

function sensorCharts(top: RankedSensors, collected: ReportCollector): string {
  const options = collected.options;
  return top
    .map(([sensor, count], rank) => {
      const series = collected.series.get(sensor);
      const head = `<h3>${esc(sensor)}</h3><p class="note">${count.raised} raised (${count.critical} critical), ${count.cleared} cleared</p>`;
      if (series === undefined)
        return `${head}<p class="note">Not charted: more than ${options.maxChartSensors} sensors in the replay and this one came later.</p>`;
      const chart = sensorChart({
        key: `s${rank}`,
        title: sensor,
        bins: series.bins.bins(),
        widthMs: series.bins.widthMs,
        markers: series.markers,
      });
      const dropped =
        series.markersDropped > 0
          ? `<p class="note">${series.markersDropped} later alert markers not drawn (limit ${options.maxMarkersPerSensor}).</p>`
          : '';
      return `${head}${chart}${dropped}`;
    })
    .join('\n');
}

function limitsNote(collected: ReportCollector): string {
  const options = collected.options;
  const untracked = collected.untracked > 0 ? ` (${collected.untracked} sensors were not charted)` : '';
  return `<p class="note">Bounded collection: ${options.binsPerSensor} time bins per sensor (bin width doubles as the span grows; each bin keeps the minimum and maximum reading, so single spikes stay visible, and the last baseline median and fences of the bin), at most ${options.maxChartSensors} charted sensors${untracked}, at most ${options.maxMarkersPerSensor} alert markers per sensor.</p>`;
}

function renderAudit(audit: AuditResult): string {
  // Seven significant digits: enough to see the digest-vs-exact difference on ordinary plant values.
  const num = (v: number): Cell => (Number.isFinite(v) ? Number(v.toPrecision(7)).toString() : null);
  const rows = audit.rows.map((r): Cell[] => [
    r.sensor,
    r.count,
    ...(['q1', 'median', 'q3'] as const).flatMap((k) => [
      num(r[k].digest),
      num(r[k].exact),
      `${(r[k].rankError * 100).toFixed(3)} pp`,
    ]),
  ]);
  const worst = audit.rows.reduce(
    (m, r) => Math.max(m, Math.abs(r.q1.rankError), Math.abs(r.median.rankError), Math.abs(r.q3.rankError)),
    0,
  );
  const skipped =
    audit.skipped.length === 0
      ? ''
      : table(
          ['sensor not compared', 'why'],
          audit.skipped.map((s) => [s.sensor, s.reason]),
        );
  return [
    '<h2>Sketch audit</h2>',
    `<p>Baseline quartiles from the digest against exact quartiles of exactly the readings in the closed window buckets (${esc(audit.convention)}). Largest rank error: ${esc((worst * 100).toFixed(3))} percentile points over ${audit.rows.length} sensors.</p>`,
    audit.rows.length === 0
      ? '<p>No sensor could be compared.</p>'
      : table(
          [
            'sensor',
            'readings',
            'Q1 digest',
            'Q1 exact',
            'Q1 rank err',
            'median digest',
            'median exact',
            'median rank err',
            'Q3 digest',
            'Q3 exact',
            'Q3 rank err',
          ],
          rows,
          {
            numeric: [1, 2, 3, 4, 5, 6, 7, 8, 9, 10],
          },
        ),
    skipped,
  ].join('\n');
}
