/**
 * The report's charts, each a self-contained SVG string with a bounded number of elements:
 * a sensor chart draws at most one point per time bin, however many readings the bins hold.
 */
import type { AlertState, Severity } from '../schema/vocabulary.js';
import type { Bin } from './bins.js';
import { HOUR_MS, type HourBar } from './hourly.js';
import { coord, esc } from './escape.js';
import {
  axes,
  bandPath,
  DEFAULT_FRAME,
  fmtNum,
  linearScale,
  linePath,
  logScale,
  markerPath,
  niceTicks,
  timeTicks,
  valueDomain,
  type Frame,
} from './svg.js';

/** An alert event drawn on a sensor chart. */
export interface AlertMarker {
  ts: number;
  value: number;
  state: AlertState;
  severity: Severity;
}

/** What a sensor chart draws: the readings' bins, the baseline band and the alert markers. */
export interface SensorChartInput {
  /** Unique within the page (used for the clip path id); any text, it is sanitised. */
  key: string;
  title: string;
  bins: readonly Bin[];
  widthMs: number;
  markers: readonly AlertMarker[];
  frame?: Frame;
}

/** Channels a sensor series samples per bin. */
export const FENCE_CHANNELS = ['median', 'lower', 'upper', 'lowerOuter', 'upperOuter'] as const;

function svgOpen(frame: Frame, cls: string, label: string): string {
  return `<svg class="${cls}" xmlns="http://www.w3.org/2000/svg" width="${frame.width}" height="${frame.height}" viewBox="0 0 ${frame.width} ${frame.height}" role="img" aria-label="${esc(label)}">`;
}

const safeId = (key: string): string => key.replace(/[^A-Za-z0-9_-]/g, '_');

/** The marker of an alert event: shape tells the state and severity apart without colour. */
export function markerShape(marker: AlertMarker): 'triangle' | 'diamond' | 'circle' | 'dot' {
  if (marker.state === 'cleared') return 'circle';
  if (marker.state === 'updated') return 'dot';
  return marker.severity === 'critical' ? 'diamond' : 'triangle';
}

/**
 * Readings as a min/max band per bin (so spikes stay visible), the baseline median line, the
 * inner and outer fence bands, and alert markers. The value axis follows the readings and the
 * inner fences; outer fences far outside are clipped to the plot.
 */
export function sensorChart(input: SensorChartInput): string {
  const frame = input.frame ?? DEFAULT_FRAME;
  const bins = input.bins;
  const label = `${input.title}: readings, baseline median, fences and alerts`;
  if (bins.length === 0)
    return `${svgOpen(frame, 'chart sensor-chart', label)}<text x="20" y="40">no readings</text></svg>`;
  const from = bins[0].start;
  const to = bins[bins.length - 1].start + input.widthMs;
  const values: number[] = [];
  for (const bin of bins) values.push(bin.min, bin.max, bin.last.lower, bin.last.upper);
  for (const marker of input.markers) values.push(marker.value);
  const [vLo, vHi] = valueDomain(values);
  const xScale = linearScale(from, to, frame.left, frame.width - frame.right);
  const yScale = linearScale(vLo, vHi, frame.height - frame.bottom, frame.top);
  const { ticks, label: tLabel } = timeTicks(from, to);
  const clip = `clip-${safeId(input.key)}`;
  const mid = (b: Bin): number => xScale(b.start + input.widthMs / 2);
  const band = (lo: string, hi: string): string =>
    bandPath(bins.map((b) => [mid(b), yScale(b.last[lo]), yScale(b.last[hi])] as const));
  // A bin whose readings are all equal still gets a visible 1.5 px band.
  const readings = bandPath(
    bins.map((bin) => {
      if (bin.count === 0) return [mid(bin), NaN, NaN] as const;
      const lowY = yScale(bin.min);
      const highY = yScale(bin.max);
      return lowY - highY < 1.5
        ? ([mid(bin), lowY + 0.75, highY - 0.75] as const)
        : ([mid(bin), lowY, highY] as const);
    }),
  );
  const median = linePath(bins.map((b) => [mid(b), yScale(b.last.median)] as const));
  const marks = input.markers
    .map((marker) => {
      const shape = markerShape(marker);
      const cls = `mark ${marker.state} ${marker.severity}`;
      const title = `${marker.state} ${marker.severity} ${new Date(marker.ts).toISOString()} value ${fmtNum(marker.value)}`;
      return `<path class="${cls}" d="${markerPath(shape, xScale(marker.ts), yScale(marker.value))}"><title>${esc(title)}</title></path>`;
    })
    .join('');
  return [
    svgOpen(frame, 'chart sensor-chart', label),
    `<defs><clipPath id="${clip}"><rect x="${frame.left}" y="${frame.top}" width="${frame.width - frame.left - frame.right}" height="${frame.height - frame.top - frame.bottom}"/></clipPath></defs>`,
    axes(
      frame,
      { ticks, scale: xScale, label: tLabel, title: 'event time (UTC)' },
      { ticks: niceTicks(vLo, vHi), scale: yScale, label: fmtNum, title: 'value' },
    ),
    `<g clip-path="url(#${clip})">`,
    `<path class="fence-outer" d="${band('lowerOuter', 'upperOuter')}"/>`,
    `<path class="fence-inner" d="${band('lower', 'upper')}"/>`,
    `<path class="readings" d="${readings}"/>`,
    `<path class="median" d="${median}"/>`,
    marks,
    '</g></svg>',
  ].join('');
}

/** What the alert-rate chart draws: raised alerts per clock hour against the budget and flood rate. */
export interface RateChartInput {
  /** Clock-hour bars over the whole data span (hourBars). */
  bars: readonly HourBar[];
  budgetPerHour: number;
  floodPerHour: number;
  frame?: Frame;
}

/**
 * Alerts raised per clock hour as bars (a bar grouping several hours shows its busiest hour),
 * against the budget and flood lines, over the whole data span.
 */
export function rateChart(input: RateChartInput): string {
  const frame = input.frame ?? { ...DEFAULT_FRAME, height: 220 };
  const label = 'alerts raised per clock hour over event time, with budget and flood lines';
  if (input.bars.length === 0)
    return `${svgOpen(frame, 'chart rate-chart', label)}<text x="20" y="40">no readings</text></svg>`;
  const from = input.bars[0].start;
  const to = input.bars[input.bars.length - 1].end;
  const top = Math.max(...input.bars.map((b) => b.maxPerHour), input.budgetPerHour) * 1.15 || 1;
  const xScale = linearScale(from, to, frame.left, frame.width - frame.right);
  const yScale = linearScale(0, top, frame.height - frame.bottom, frame.top);
  const { ticks, label: tLabel } = timeTicks(from, to);
  const bars = input.bars
    .map((bar) => {
      if (bar.maxPerHour === 0) return '';
      const over = bar.maxPerHour > input.budgetPerHour ? ' over' : '';
      const barTop = yScale(bar.maxPerHour);
      const barWidth = Math.max(1, xScale(bar.end) - xScale(bar.start) - 0.5);
      const hours = (bar.end - bar.start) / HOUR_MS;
      const text =
        hours === 1
          ? `${new Date(bar.start).toISOString()}: ${bar.total} raised in this hour`
          : `${new Date(bar.start).toISOString()} (${fmtNum(hours)} h): ${bar.total} raised, busiest hour ${bar.maxPerHour}`;
      return `<rect class="bar${over}" x="${coord(xScale(bar.start))}" y="${coord(barTop)}" width="${coord(barWidth)}" height="${coord(yScale(0) - barTop)}"><title>${esc(text)}</title></rect>`;
    })
    .join('');
  const line = (level: number, cls: string, text: string): string => {
    if (level > top) return '';
    const lineY = coord(yScale(level));
    return `<line class="${cls}" x1="${frame.left}" x2="${frame.width - frame.right}" y1="${lineY}" y2="${lineY}"/><text class="line-label" x="${frame.width - frame.right - 4}" y="${coord(yScale(level) - 4)}" text-anchor="end">${esc(text)}</text>`;
  };
  return [
    svgOpen(frame, 'chart rate-chart', label),
    axes(
      frame,
      { ticks, scale: xScale, label: tLabel, title: 'event time (UTC)' },
      { ticks: niceTicks(0, top), scale: yScale, label: fmtNum, title: 'raised per clock hour' },
    ),
    bars,
    line(input.budgetPerHour, 'budget', `budget ${fmtNum(input.budgetPerHour)}/h`),
    line(input.floodPerHour, 'flood', `flood ${fmtNum(input.floodPerHour)}/h`),
    '</svg>',
  ].join('');
}

/** One grid point on the tune chart: alert rate against recall, precision as marker size. */
export interface ScatterPoint {
  label: string;
  alertsPerHour: number;
  recall: number | null;
  precision: number | null;
  recommended: boolean;
}

/**
 * Tuning grid: alert rate (x, log scale) against recall (y); precision sets marker size and
 * shade; the budget is a vertical line; the recommended point is ringed and labelled.
 */
export function tuneScatter(points: readonly ScatterPoint[], budgetPerHour: number, frame?: Frame): string {
  const chartFrame = frame ?? { ...DEFAULT_FRAME, height: 340, bottom: 40 };
  const label = 'tuning grid: alert rate against recall, precision as marker size';
  const rated = points.filter((p) => p.recall !== null && Number.isFinite(p.alertsPerHour));
  if (rated.length === 0)
    return `${svgOpen(chartFrame, 'chart tune-chart', label)}<text x="20" y="40">no grid points with a recall</text></svg>`;
  const positive = rated.map((p) => p.alertsPerHour).filter((v) => v > 0);
  const lowRate = Math.min(...positive, budgetPerHour) / 2 || 0.01;
  const highRate = Math.max(...positive, budgetPerHour) * 2 || 10;
  const xScale = logScale(lowRate, highRate, chartFrame.left, chartFrame.width - chartFrame.right);
  const yScale = linearScale(0, 1, chartFrame.height - chartFrame.bottom, chartFrame.top);
  const decades: number[] = [];
  for (
    let exponent = Math.floor(Math.log10(lowRate));
    exponent <= Math.ceil(Math.log10(highRate));
    exponent++
  )
    decades.push(10 ** exponent);
  const dots = rated
    .map((point) => {
      const prec = point.precision ?? 0;
      const radius = 3 + 7 * prec;
      const cls = point.recommended ? 'pt recommended' : 'pt';
      const pointX = xScale(Math.max(point.alertsPerHour, lowRate));
      const pointY = yScale(point.recall as number);
      const title = `${point.label}: ${fmtNum(point.alertsPerHour)} alerts/h, recall ${fmtNum(point.recall as number)}, precision ${point.precision === null ? 'n/a' : fmtNum(prec)}`;
      const ring = point.recommended
        ? `<circle class="ring" cx="${coord(pointX)}" cy="${coord(pointY)}" r="${coord(radius + 5)}"/><text class="line-label" x="${coord(pointX + radius + 8)}" y="${coord(pointY - radius - 4)}">recommended</text>`
        : '';
      return `<circle class="${cls}" cx="${coord(pointX)}" cy="${coord(pointY)}" r="${coord(radius)}" fill-opacity="${coord(0.25 + 0.65 * prec)}"><title>${esc(title)}</title></circle>${ring}`;
    })
    .join('');
  const budgetX = coord(xScale(budgetPerHour));
  return [
    svgOpen(chartFrame, 'chart tune-chart', label),
    axes(
      chartFrame,
      { ticks: decades, scale: xScale, label: fmtNum, title: 'alerts per hour (log)' },
      { ticks: [0, 0.25, 0.5, 0.75, 1], scale: yScale, label: fmtNum, title: 'recall' },
    ),
    `<line class="budget" x1="${budgetX}" x2="${budgetX}" y1="${chartFrame.top}" y2="${chartFrame.height - chartFrame.bottom}"/>`,
    `<text class="line-label" x="${coord(xScale(budgetPerHour) + 4)}" y="${chartFrame.top + 12}">budget ${fmtNum(budgetPerHour)}/h</text>`,
    dots,
    '</svg>',
  ].join('');
}
