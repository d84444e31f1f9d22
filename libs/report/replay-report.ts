/**
 * The replay report observer: plugs into runReplay, collects what the report draws while the
 * readings stream past, and renders one self-contained report.html at the end.
 *
 * Memory is bounded whatever the number of readings: each charted sensor keeps a fixed number of
 * adaptive time bins (min/max of readings, and the baseline median and fences sampled per bin),
 * at most `maxChartSensors` sensors are charted (the first seen; alert counts are kept for all),
 * alert markers are capped per sensor, and the optional sketch audit mirrors at most
 * `auditSample` sensors with at most `auditCap` readings each.
 */
import type { Engine, ProcessOutcome } from '../engine/engine.js';
import type { Reading } from '../engine/reading.js';
import type { Baseline } from '../engine/window.js';
import { ALERT_BUDGET_PER_HOUR, FLOOD_LIMIT, FLOOD_WINDOW_MS } from '../schema/vocabulary.js';
import { AuditSample, auditRow, BucketMirror, type AuditRow } from './audit.js';
import { AdaptiveBins } from './bins.js';
import { HourlyCounts, hourBars } from './hourly.js';
import { FENCE_CHANNELS, markerShape, rateChart, sensorChart, type AlertMarker } from './charts.js';
import { esc } from './escape.js';
import { healthSection } from './health.js';
import { fenceBand, NO_BAND } from './fences.js';
import { page, table, type Cell } from './html.js';
import { fmtNum, markerPath } from './svg.js';
import type { ReplayObserver, ReplaySummary } from '../schema/replay.js';

/** Options of the replay report (`replay --report`, `--audit`). */
export interface ReportOptions {
  /** Sensors charted, by alerts raised (default 8). */
  topN?: number;
  /** Run the sketch audit (default false). */
  audit?: boolean;
  /** Sensors audited (default 20). */
  auditSample?: number;
  /** Exact readings kept per audited sensor (default 200 000). */
  auditCap?: number;
  /** Alert budget in raised alerts per hour (default 6). */
  budgetPerHour?: number;
  /** Time bins per charted sensor (default 360). */
  binsPerSensor?: number;
  /** Sensors with chart bins (default 2000). */
  maxChartSensors?: number;
  /** Alert markers kept per sensor (default 400). */
  maxMarkersPerSensor?: number;
}

/** Defaults of the replay report options. */
export const REPORT_DEFAULTS = {
  topN: 8,
  auditSample: 20,
  auditCap: 200_000,
  budgetPerHour: ALERT_BUDGET_PER_HOUR,
  binsPerSensor: 360,
  maxChartSensors: 2000,
  maxMarkersPerSensor: 400,
} as const;

/** Flood: more than FLOOD_LIMIT alerts raised within 10 minutes (the tuning's convention, common practice). */
export const FLOOD = { limit: FLOOD_LIMIT, windowMs: FLOOD_WINDOW_MS } as const;

/** The audit result for summary.json: rows compared, plus sensors that could not be compared and why. */
export interface AuditResult {
  convention: string;
  rows: AuditRow[];
  skipped: { sensor: string; reason: string }[];
}

interface Series {
  bins: AdaptiveBins;
  markers: AlertMarker[];
  markersDropped: number;
  bandFor: Baseline | null;
  band: Float64Array;
}

interface AlertCount {
  raised: number;
  updated: number;
  cleared: number;
  critical: number;
}

interface Mirror {
  m: BucketMirror;
  openIndex: number;
}

/** A replay observer that collects the report's figures and renders report.html at the end. */
export type ReportObserver = ReplayObserver & {
  render(summary: ReplaySummary): string;
  /** Audit numbers (null when the audit is off); available after onEnd. */
  auditResult(): AuditResult | null;
};

/** Most bars on the alert-rate chart; longer spans group whole hours per bar. */
const RATE_BARS = 168;

// The first bin width: fine enough for a few minutes of data; it doubles as the span grows.
const FIRST_BIN_MS = 1000;

/** The replay report: pass it to runReplay as an observer, then `render(summary)`. */
export function createReportObserver(opts: ReportOptions = {}): ReportObserver {
  const o: Required<Omit<ReportOptions, 'audit'>> = { ...REPORT_DEFAULTS, ...stripUndefined(opts) };
  const series = new Map<string, Series>();
  const counts = new Map<string, AlertCount>();
  // Raised alerts per clock hour: the chart compares real hourly counts with the hourly budget.
  const rate = new HourlyCounts();
  let untracked = 0;
  const span = { from: Infinity, to: -Infinity };
  // Raised times in the last 10 minutes of event time (for the worst 10-minute count).
  const recent: number[] = [];
  let worst10 = { count: 0, endTs: NaN };
  const sample = opts.audit
    ? new AuditSample<Mirror>(o.auditSample, () => ({ m: new BucketMirror(o.auditCap), openIndex: -1 }))
    : null;
  let audit: AuditResult | null = null;

  const seriesFor = (sensor: string): Series | undefined => {
    let s = series.get(sensor);
    if (s === undefined) {
      if (series.size >= o.maxChartSensors) return undefined;
      s = {
        bins: new AdaptiveBins({
          slots: o.binsPerSensor,
          initialWidthMs: FIRST_BIN_MS,
          lastChannels: FENCE_CHANNELS,
        }),
        markers: [],
        markersDropped: 0,
        bandFor: null,
        band: NO_BAND,
      };
      series.set(sensor, s);
    }
    return s;
  };

  const onRaised = (ts: number): void => {
    rate.add(ts);
    // Sliding 10-minute window over raised times; exact for time-ordered input, approximate otherwise.
    recent.push(ts);
    while (recent.length > 0 && recent[0] <= ts - FLOOD.windowMs) recent.shift();
    if (recent.length > worst10.count) worst10 = { count: recent.length, endTs: ts };
  };

  const observer: ReportObserver = {
    onReading(r: Reading, outcome: ProcessOutcome, engine: Engine): void {
      if (!outcome.accepted) return;
      const st = engine.get(r.sensor)!;
      if (r.ts < span.from) span.from = r.ts;
      if (r.ts > span.to) span.to = r.ts;
      const s = series.get(r.sensor) ?? seriesFor(r.sensor);
      if (s !== undefined) {
        const b = st.window.baseline();
        if (b !== s.bandFor) {
          s.bandFor = b;
          s.band = b === null ? NO_BAND : fenceBand(b, st.settings);
        }
        s.bins.addSampled(r.ts, r.value, s.band);
      } else if (!counts.has(r.sensor) && st.seen === 1) untracked++;
      const ev = outcome.events;
      for (let i = 0; i < ev.length; i++) {
        const e = ev[i];
        // Usually the reading's own sensor; a reading that moves event time on can also raise a
        // silent sensor's alert, which belongs to that sensor at the event's own time.
        const own = e.sensor === r.sensor;
        const ts = own ? r.ts : Date.parse(e.ts);
        let c = counts.get(e.sensor);
        if (c === undefined) {
          c = { raised: 0, updated: 0, cleared: 0, critical: 0 };
          counts.set(e.sensor, c);
        }
        c[e.state]++;
        if (e.state === 'raised') {
          if (e.severity === 'critical') c.critical++;
          onRaised(ts);
        }
        const es = own ? s : series.get(e.sensor);
        if (es !== undefined) {
          if (es.markers.length < o.maxMarkersPerSensor)
            es.markers.push({ ts, value: e.value, state: e.state, severity: e.severity });
          else es.markersDropped++;
        }
      }
      if (sample !== null) {
        const mir = sample.get(r.sensor);
        if (mir !== undefined) {
          // Mirror exactly the readings the engine added to the open bucket.
          const added = outcome.learned;
          const w = st.window;
          if (w.openIndex !== mir.openIndex) {
            mir.openIndex = w.openIndex;
            mir.m.prune(w.openIndex, w.buckets);
          }
          if (added) mir.m.add(w.openIndex, r.value);
        }
      }
    },

    onEnd(engine: Engine): void {
      if (sample === null) return;
      const rows: AuditRow[] = [];
      const skipped: { sensor: string; reason: string }[] = [];
      for (const [sensor, mir] of sample.entries()) {
        const st = engine.get(sensor);
        const b = st?.window.baseline() ?? null;
        if (st === undefined || b === null) {
          skipped.push({ sensor, reason: 'no closed bucket yet (no baseline)' });
          continue;
        }
        if (mir.m.overflowed) {
          skipped.push({ sensor, reason: `more than ${o.auditCap} readings in the window (audit cap)` });
          continue;
        }
        const sorted = mir.m.sortedUnion(st.window.closed.map((c) => c.index));
        if (sorted.length !== b.count) {
          skipped.push({
            sensor,
            reason: `mirrored ${sorted.length} readings but the baseline holds ${b.count}`,
          });
          continue;
        }
        rows.push(auditRow(sensor, sorted, b));
      }
      audit = {
        convention:
          'exact quartiles: Hyndman-Fan type 7; rank error = distance from p to the exact rank range of the digest value (of the data values either side when it falls between two)',
        rows,
        skipped,
      };
    },

    auditResult: () => audit,

    render(summary: ReplaySummary): string {
      return renderReplayReport(summary, {
        o,
        series,
        counts,
        rate,
        untracked,
        worst10,
        audit,
        span,
      });
    },
  };
  return observer;
}

function stripUndefined<T extends object>(x: T): Partial<T> {
  return Object.fromEntries(Object.entries(x).filter(([, v]) => v !== undefined)) as Partial<T>;
}

interface Collected {
  o: Required<Omit<ReportOptions, 'audit'>>;
  series: Map<string, Series>;
  counts: Map<string, AlertCount>;
  rate: HourlyCounts;
  untracked: number;
  worst10: { count: number; endTs: number };
  audit: AuditResult | null;
  span: { from: number; to: number };
}

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

function renderReplayReport(summary: ReplaySummary, c: Collected): string {
  const { o } = c;
  const spanText =
    c.span.from <= c.span.to
      ? `${new Date(c.span.from).toISOString()} to ${new Date(c.span.to).toISOString()}`
      : 'no readings';

  const overview = table(
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
  const rejectRows = Object.entries(summary.rejected.byReason).map(([k, v]): Cell[] => [k, v]);
  const rejects =
    rejectRows.length === 0
      ? '<p>No line was rejected.</p>'
      : table(['reason', 'lines'], rejectRows, { numeric: [1] });

  const ranked = [...c.counts.entries()].sort(
    (a, b) =>
      b[1].raised - a[1].raised || b[1].critical - a[1].critical || (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0),
  );
  const alertRows = ranked
    .slice(0, Math.max(o.topN, 20))
    .map(([sensor, n]): Cell[] => [sensor, n.raised, n.critical, n.updated, n.cleared]);
  const alertTable =
    alertRows.length === 0
      ? '<p>No alert was raised.</p>'
      : table(['sensor', 'raised', 'of which critical', 'updated', 'cleared'], alertRows, {
          numeric: [1, 2, 3, 4],
        }) +
        (ranked.length > alertRows.length
          ? `<p class="note">${ranked.length - alertRows.length} more sensors raised alerts.</p>`
          : '');

  const hours = c.span.from < c.span.to ? (c.span.to - c.span.from) / 3_600_000 : 0;
  const floodPerHour = (FLOOD.limit * 3_600_000) / FLOOD.windowMs;
  const rateSection = [
    `<p>${esc(summary.alerts.raised)} alerts raised over ${esc(fmtNum(hours))} h of event time (${esc(fmtNum(hours > 0 ? summary.alerts.raised / hours : 0))}/h on average); budget ${esc(fmtNum(o.budgetPerHour))}/h. ` +
      `Worst 10 minutes: ${esc(c.worst10.count)} raised${Number.isFinite(c.worst10.endTs) ? ` (ending ${esc(new Date(c.worst10.endTs).toISOString())})` : ''}; a flood is more than ${FLOOD.limit} within ${FLOOD.windowMs / 60_000} minutes (common practice).</p>`,
    rateChart({
      bars: hourBars(c.rate, c.span.from, c.span.to, RATE_BARS),
      budgetPerHour: o.budgetPerHour,
      floodPerHour,
    }),
    `<p class="note">Bars: alerts raised in each clock hour (UTC) across the whole data span; when the span has more than ${RATE_BARS} hours a bar groups several hours and shows its busiest hour. Bars over the budget are shaded differently. The flood line (${floodPerHour}/h) is drawn only when it falls inside the scale.</p>`,
  ].join('\n');

  const top = ranked.slice(0, o.topN);
  const charts = top
    .map(([sensor, n], i) => {
      const s = c.series.get(sensor);
      const head = `<h3>${esc(sensor)}</h3><p class="note">${n.raised} raised (${n.critical} critical), ${n.cleared} cleared</p>`;
      if (s === undefined)
        return `${head}<p class="note">Not charted: more than ${o.maxChartSensors} sensors in the replay and this one came later.</p>`;
      const chart = sensorChart({
        key: `s${i}`,
        title: sensor,
        bins: s.bins.bins(),
        widthMs: s.bins.widthMs,
        markers: s.markers,
      });
      const dropped =
        s.markersDropped > 0
          ? `<p class="note">${s.markersDropped} later alert markers not drawn (limit ${o.maxMarkersPerSensor}).</p>`
          : '';
      return `${head}${chart}${dropped}`;
    })
    .join('\n');

  const auditSection = c.audit === null ? '' : renderAudit(c.audit);
  const limits = `<p class="note">Bounded collection: ${o.binsPerSensor} time bins per sensor (bin width doubles as the span grows; each bin keeps the minimum and maximum reading, so single spikes stay visible, and the last baseline median and fences of the bin), at most ${o.maxChartSensors} charted sensors${c.untracked > 0 ? ` (${c.untracked} sensors were not charted)` : ''}, at most ${o.maxMarkersPerSensor} alert markers per sensor.</p>`;

  const body = [
    '<h2>Summary</h2>',
    `<p>Event time: ${esc(spanText)}. Engine ${esc(summary.engineVersion)}.</p>`,
    overview,
    '<h3>Rejected lines by reason</h3>',
    rejects,
    '<h2>Alert rate</h2>',
    rateSection,
    '<h2 id="health">Alert-system health</h2>',
    healthSection(summary.kpis),
    '<h2>Alerts by sensor</h2>',
    alertTable,
    `<h2>Top ${esc(top.length)} sensors by alerts raised</h2>`,
    top.length === 0 ? '<p>No sensor raised an alert, so no sensor chart is drawn.</p>' : legend() + charts,
    auditSection,
    '<h2>About this report</h2>',
    limits,
  ].join('\n');
  return page(
    'streamfence replay report',
    `${summary.readings} readings from ${summary.sensors} sensors`,
    body,
  );
}

function renderAudit(a: AuditResult): string {
  // Seven significant digits: enough to see the digest-vs-exact difference on ordinary plant values.
  const num = (v: number): Cell => (Number.isFinite(v) ? Number(v.toPrecision(7)).toString() : null);
  const rows = a.rows.map((r): Cell[] => [
    r.sensor,
    r.count,
    ...(['q1', 'median', 'q3'] as const).flatMap((k) => [
      num(r[k].digest),
      num(r[k].exact),
      `${(r[k].rankError * 100).toFixed(3)} pp`,
    ]),
  ]);
  const worst = a.rows.reduce(
    (m, r) => Math.max(m, Math.abs(r.q1.rankError), Math.abs(r.median.rankError), Math.abs(r.q3.rankError)),
    0,
  );
  const skipped =
    a.skipped.length === 0
      ? ''
      : table(
          ['sensor not compared', 'why'],
          a.skipped.map((s) => [s.sensor, s.reason]),
        );
  return [
    '<h2>Sketch audit</h2>',
    `<p>Baseline quartiles from the digest against exact quartiles of exactly the readings in the closed window buckets (${esc(a.convention)}). Largest rank error: ${esc((worst * 100).toFixed(3))} percentile points over ${a.rows.length} sensors.</p>`,
    a.rows.length === 0
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
