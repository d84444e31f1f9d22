/**
 * What the replay report collects while the readings stream past: per-sensor chart bins and alert
 * markers, alert counts per sensor, raised alerts per clock hour, the worst 10 minutes, the data
 * span and (optionally) the sketch audit's exact mirrors.
 *
 * Memory is bounded whatever the number of readings: each charted sensor keeps a fixed number of
 * adaptive time bins (min/max of readings, and the baseline median and fences sampled per bin),
 * at most `maxChartSensors` sensors are charted (the first seen; alert counts are kept for all),
 * alert markers are capped per sensor, and the optional sketch audit mirrors at most
 * `auditSample` sensors with at most `auditCap` readings each.
 */
import type { Engine, ProcessOutcome } from '../engine/engine.js';
import type { Reading } from '../engine/reading.js';
import type { SensorState } from '../engine/sensor-state.js';
import type { Baseline } from '../engine/window.js';
import type { AlertEvent } from '../schema/alert-event.js';
import { ALERT_BUDGET_PER_HOUR, FLOOD_LIMIT, FLOOD_WINDOW_MS } from '../schema/vocabulary.js';
import { AuditSample, auditRow, BucketMirror, type AuditRow } from './audit.js';
import { AdaptiveBins } from './bins.js';
import { FENCE_CHANNELS, type AlertMarker } from './charts.js';
import { fenceBand, NO_BAND } from './fences.js';
import { HourlyCounts } from './hourly.js';

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

/** The report options with every default filled in (the audit switch aside). */
export type ResolvedReportOptions = Required<Omit<ReportOptions, 'audit'>>;

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

/** One charted sensor: its time bins, alert markers, and the fence band of its current baseline. */
export interface SensorSeries {
  bins: AdaptiveBins;
  markers: AlertMarker[];
  markersDropped: number;
  /** The baseline `band` was computed from (recomputed only when the baseline object changes). */
  bandFor: Baseline | null;
  band: Float64Array;
}

/** Alert events of one sensor, by state, and how many raises were critical. */
export interface SensorAlertCount {
  raised: number;
  updated: number;
  cleared: number;
  critical: number;
}

/** An audited sensor's exact readings and the window bucket they were last filed under. */
interface AuditMirror {
  readings: BucketMirror;
  openIndex: number;
}

/** The convention the audit compares against, as written into summary.json and the report. */
const AUDIT_CONVENTION =
  'exact quartiles: Hyndman-Fan type 7; rank error = distance from p to the exact rank range of the digest value (of the data values either side when it falls between two)';

// The first bin width: fine enough for a few minutes of data; it doubles as the span grows.
const FIRST_BIN_MS = 1000;

/** Collects the replay report's figures from the readings and outcomes of one replay. */
export class ReportCollector {
  /** The options with their defaults filled in. */
  readonly options: ResolvedReportOptions;
  /** Charted sensors, in the order first seen (at most `maxChartSensors`). */
  readonly series = new Map<string, SensorSeries>();
  /** Alert counts of every sensor that had an alert event. */
  readonly counts = new Map<string, SensorAlertCount>();
  /** Raised alerts per clock hour: the chart compares real hourly counts with the hourly budget. */
  readonly rate = new HourlyCounts();
  /** Event-time span of the accepted readings (from > to when there were none). */
  readonly span = { from: Infinity, to: -Infinity };
  /** Sensors with readings but no chart (over `maxChartSensors`) and no alert when first seen. */
  untracked = 0;
  /** The most alerts raised within 10 minutes of event time, and when that window ended. */
  worst10 = { count: 0, endTs: NaN };
  private audit: AuditResult | null = null;
  // Raised times in the last 10 minutes of event time (for the worst 10-minute count).
  private readonly recentRaises: number[] = [];
  private readonly auditSample: AuditSample<AuditMirror> | null;

  constructor(options: ReportOptions = {}) {
    this.options = { ...REPORT_DEFAULTS, ...withoutUndefined(options) };
    const cap = this.options.auditCap;
    this.auditSample = options.audit
      ? new AuditSample<AuditMirror>(this.options.auditSample, () => ({
          readings: new BucketMirror(cap),
          openIndex: -1,
        }))
      : null;
  }

  /** Takes one reading and what the engine made of it. */
  onReading(reading: Reading, outcome: ProcessOutcome, engine: Engine): void {
    if (!outcome.accepted) return;
    const state = engine.get(reading.sensor)!;
    if (reading.ts < this.span.from) this.span.from = reading.ts;
    if (reading.ts > this.span.to) this.span.to = reading.ts;
    const series = this.series.get(reading.sensor) ?? this.newSeries(reading.sensor);
    if (series !== undefined) chartReading(series, reading, state);
    else if (!this.counts.has(reading.sensor) && state.seen === 1) this.untracked++;
    for (const event of outcome.events) this.countEvent(event, reading, series);
    if (this.auditSample !== null) this.mirrorForAudit(reading, outcome.learned, state);
  }

  /** Compares the audited sensors' baselines with exact quartiles, once the replay is over. */
  onEnd(engine: Engine): void {
    if (this.auditSample === null) return;
    const rows: AuditRow[] = [];
    const skipped: { sensor: string; reason: string }[] = [];
    for (const [sensor, mirror] of this.auditSample.entries()) {
      const state = engine.get(sensor);
      const baseline = state?.window.baseline() ?? null;
      if (state === undefined || baseline === null) {
        skipped.push({ sensor, reason: 'no closed bucket yet (no baseline)' });
        continue;
      }
      if (mirror.readings.overflowed) {
        skipped.push({
          sensor,
          reason: `more than ${this.options.auditCap} readings in the window (audit cap)`,
        });
        continue;
      }
      const sorted = mirror.readings.sortedUnion(state.window.closed.map((bucket) => bucket.index));
      if (sorted.length !== baseline.count) {
        skipped.push({
          sensor,
          reason: `mirrored ${sorted.length} readings but the baseline holds ${baseline.count}`,
        });
        continue;
      }
      rows.push(auditRow(sensor, sorted, baseline));
    }
    this.audit = { convention: AUDIT_CONVENTION, rows, skipped };
  }

  /** Audit numbers (null when the audit is off); available after onEnd. */
  auditResult(): AuditResult | null {
    return this.audit;
  }

  private newSeries(sensor: string): SensorSeries | undefined {
    if (this.series.size >= this.options.maxChartSensors) return undefined;
    const series: SensorSeries = {
      bins: new AdaptiveBins({
        slots: this.options.binsPerSensor,
        initialWidthMs: FIRST_BIN_MS,
        lastChannels: FENCE_CHANNELS,
      }),
      markers: [],
      markersDropped: 0,
      bandFor: null,
      band: NO_BAND,
    };
    this.series.set(sensor, series);
    return series;
  }

  private countEvent(event: AlertEvent, reading: Reading, readingSeries: SensorSeries | undefined): void {
    // Usually the reading's own sensor; a reading that moves event time on can also raise a
    // silent sensor's alert, which belongs to that sensor at the event's own time.
    const own = event.sensor === reading.sensor;
    const ts = own ? reading.ts : Date.parse(event.ts);
    let count = this.counts.get(event.sensor);
    if (count === undefined) {
      count = { raised: 0, updated: 0, cleared: 0, critical: 0 };
      this.counts.set(event.sensor, count);
    }
    count[event.state]++;
    if (event.state === 'raised') {
      if (event.severity === 'critical') count.critical++;
      this.countRaise(ts);
    }
    const series = own ? readingSeries : this.series.get(event.sensor);
    if (series === undefined) return;
    if (series.markers.length < this.options.maxMarkersPerSensor)
      series.markers.push({ ts, value: event.value, state: event.state, severity: event.severity });
    else series.markersDropped++;
  }

  private countRaise(ts: number): void {
    this.rate.add(ts);
    // Sliding 10-minute window over raised times; exact for time-ordered input, approximate otherwise.
    const recent = this.recentRaises;
    recent.push(ts);
    while (recent.length > 0 && recent[0] <= ts - FLOOD.windowMs) recent.shift();
    if (recent.length > this.worst10.count) this.worst10 = { count: recent.length, endTs: ts };
  }

  private mirrorForAudit(reading: Reading, learned: boolean, state: SensorState): void {
    const mirror = this.auditSample!.get(reading.sensor);
    if (mirror === undefined) return;
    // Mirror exactly the readings the engine added to the open bucket.
    const window = state.window;
    if (window.openIndex !== mirror.openIndex) {
      mirror.openIndex = window.openIndex;
      mirror.readings.prune(window.openIndex, window.buckets);
    }
    if (learned) mirror.readings.add(window.openIndex, reading.value);
  }
}

/** Adds a reading to its sensor's bins, with the fences of the baseline it was judged against. */
function chartReading(series: SensorSeries, reading: Reading, state: SensorState): void {
  const baseline = state.window.baseline();
  if (baseline !== series.bandFor) {
    series.bandFor = baseline;
    series.band = baseline === null ? NO_BAND : fenceBand(baseline, state.settings);
  }
  series.bins.addSampled(reading.ts, reading.value, series.band);
}

function withoutUndefined<T extends object>(options: T): Partial<T> {
  return Object.fromEntries(Object.entries(options).filter(([, value]) => value !== undefined)) as Partial<T>;
}
