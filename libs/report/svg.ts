/**
 * Small SVG building blocks for the report charts: linear/log scales, readable ticks for values
 * and for UTC time, and a plot frame with axes. Output is plain SVG text, so a report needs no
 * script and no network to show its charts.
 */
import { coord, esc } from './escape.js';

/** A chart's size and margins, in SVG user units. */
export interface Frame {
  width: number;
  height: number;
  left: number;
  right: number;
  top: number;
  bottom: number;
}

/** The frame every report chart uses unless told otherwise. */
export const DEFAULT_FRAME: Frame = { width: 960, height: 280, left: 64, right: 16, top: 14, bottom: 34 };

/** Maps a data value to an SVG coordinate. */
export type Scale = (value: number) => number;

/** The linear map from [domainStart, domainEnd] to [rangeStart, rangeEnd] (a zero-width domain maps as if it were 1 wide). */
export function linearScale(
  domainStart: number,
  domainEnd: number,
  rangeStart: number,
  rangeEnd: number,
): Scale {
  const span = domainEnd - domainStart || 1;
  return (v) => rangeStart + ((v - domainStart) / span) * (rangeEnd - rangeStart);
}

/** Log10 scale; values <= 0 are drawn at the lower end. */
export function logScale(
  domainStart: number,
  domainEnd: number,
  rangeStart: number,
  rangeEnd: number,
): Scale {
  const logStart = Math.log10(domainStart);
  const span = Math.log10(domainEnd) - logStart || 1;
  return (v) =>
    v <= 0 ? rangeStart : rangeStart + ((Math.log10(v) - logStart) / span) * (rangeEnd - rangeStart);
}

/** About `count` round tick values covering [min, max] (steps of 1, 2 or 5 times a power of ten). */
export function niceTicks(min: number, max: number, count = 5): number[] {
  if (!Number.isFinite(min) || !Number.isFinite(max)) return [];
  if (min === max) return [min];
  const raw = (max - min) / Math.max(1, count);
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * mag).find((s) => s >= raw) ?? 10 * mag;
  const out: number[] = [];
  for (let tick = Math.ceil(min / step) * step; tick <= max + step * 1e-9; tick += step)
    out.push(Math.abs(tick) < step * 1e-9 ? 0 : tick);
  return out;
}

/** Padded value domain [lo, hi] for a set of values (ignores non-finite ones). */
export function valueDomain(values: Iterable<number>, pad = 0.06): [number, number] {
  let low = Infinity;
  let high = -Infinity;
  for (const value of values) {
    if (!Number.isFinite(value)) continue;
    if (value < low) low = value;
    if (value > high) high = value;
  }
  if (low > high) return [0, 1];
  if (low === high) return [low - 1, high + 1];
  const padding = (high - low) * pad;
  return [low - padding, high + padding];
}

const TIME_STEPS = [
  1000,
  5000,
  15_000,
  60_000,
  300_000,
  900_000,
  1_800_000,
  3_600_000,
  3 * 3_600_000,
  6 * 3_600_000,
  12 * 3_600_000,
  86_400_000,
  2 * 86_400_000,
  7 * 86_400_000,
  30 * 86_400_000,
  365 * 86_400_000,
];

/** Round UTC tick times across [from, to] and a label format suited to their spacing. */
export function timeTicks(
  from: number,
  to: number,
  count = 6,
): { ticks: number[]; label: (ts: number) => string } {
  const raw = (to - from) / Math.max(1, count);
  const step = TIME_STEPS.find((s) => s >= raw) ?? TIME_STEPS[TIME_STEPS.length - 1];
  const ticks: number[] = [];
  for (let tick = Math.ceil(from / step) * step; tick <= to; tick += step) ticks.push(tick);
  const label = (ts: number): string => {
    const iso = new Date(ts).toISOString();
    if (step >= 86_400_000) return iso.slice(0, 10);
    if (step >= 60_000) return `${iso.slice(5, 10)} ${iso.slice(11, 16)}`;
    return iso.slice(11, 19);
  };
  return { ticks, label };
}

/** Short numeric label (keeps 4 significant digits, no exponent for ordinary plant values). */
export function fmtNum(value: number): string {
  if (!Number.isFinite(value)) return '–';
  const magnitude = Math.abs(value);
  if (magnitude !== 0 && (magnitude >= 1e7 || magnitude < 1e-3)) return value.toExponential(2);
  return Number(value.toPrecision(4)).toString();
}

/** Axes, grid lines and labels for a plot area; the caller draws the data inside. */
export function axes(
  frame: Frame,
  xAxis: { ticks: number[]; scale: Scale; label: (value: number) => string; title?: string },
  yAxis: { ticks: number[]; scale: Scale; label: (value: number) => string; title?: string },
): string {
  const parts: string[] = [];
  const plotLeft = frame.left;
  const plotRight = frame.width - frame.right;
  const plotBottom = frame.height - frame.bottom;
  const plotTop = frame.top;
  for (const tick of yAxis.ticks) {
    const tickY = yAxis.scale(tick);
    if (tickY < plotTop - 0.5 || tickY > plotBottom + 0.5) continue;
    parts.push(
      `<line class="grid" x1="${plotLeft}" x2="${plotRight}" y1="${coord(tickY)}" y2="${coord(tickY)}"/>`,
    );
    parts.push(
      `<text class="tick" x="${plotLeft - 6}" y="${coord(tickY + 4)}" text-anchor="end">${esc(yAxis.label(tick))}</text>`,
    );
  }
  for (const tick of xAxis.ticks) {
    const tickX = xAxis.scale(tick);
    if (tickX < plotLeft - 0.5 || tickX > plotRight + 0.5) continue;
    parts.push(
      `<line class="grid" x1="${coord(tickX)}" x2="${coord(tickX)}" y1="${plotTop}" y2="${plotBottom}"/>`,
    );
    // A label centred on the right edge would be cut off by the frame.
    if (tickX > frame.width - 36) continue;
    parts.push(
      `<text class="tick" x="${coord(tickX)}" y="${plotBottom + 16}" text-anchor="middle">${esc(xAxis.label(tick))}</text>`,
    );
  }
  parts.push(
    `<rect class="frame" x="${plotLeft}" y="${plotTop}" width="${plotRight - plotLeft}" height="${plotBottom - plotTop}"/>`,
  );
  if (xAxis.title)
    parts.push(
      `<text class="axis-title" x="${plotRight}" y="${frame.height - 2}" text-anchor="end">${esc(xAxis.title)}</text>`,
    );
  if (yAxis.title) {
    parts.push(
      `<text class="axis-title" transform="translate(12 ${plotTop + (plotBottom - plotTop) / 2}) rotate(-90)" text-anchor="middle">${esc(yAxis.title)}</text>`,
    );
  }
  return parts.join('');
}

/** Path data for a polyline; NaN points break the line into separate runs. */
export function linePath(points: readonly (readonly [number, number])[]): string {
  let path = '';
  let pen = false;
  for (const [pointX, pointY] of points) {
    if (!Number.isFinite(pointX) || !Number.isFinite(pointY)) {
      pen = false;
      continue;
    }
    path += `${pen ? 'L' : 'M'}${coord(pointX)} ${coord(pointY)}`;
    pen = true;
  }
  return path;
}

/**
 * Path data for a band between lower and upper edges; a point with a non-finite edge splits the
 * band, so gaps in the data stay visible as gaps.
 */
export function bandPath(points: readonly (readonly [number, number, number])[]): string {
  let path = '';
  let run: (readonly [number, number, number])[] = [];
  const flush = (): void => {
    if (run.length === 0) return;
    const up = run.map(([px, , hi]) => `${coord(px)} ${coord(hi)}`);
    const down = run.map(([px, lo]) => `${coord(px)} ${coord(lo)}`).reverse();
    path += `M${up.join('L')}L${down.join('L')}Z`;
    run = [];
  };
  for (const point of points) {
    if (point.every(Number.isFinite)) run.push(point);
    else flush();
  }
  flush();
  return path;
}

/** Marker shapes: severity is told by shape as well as colour. */
export function markerPath(
  shape: 'triangle' | 'diamond' | 'circle' | 'dot',
  centreX: number,
  centreY: number,
  radius = 5,
): string {
  const xText = coord(centreX);
  switch (shape) {
    case 'triangle':
      return `M${xText} ${coord(centreY - radius)}L${coord(centreX + radius)} ${coord(centreY + radius * 0.8)}L${coord(centreX - radius)} ${coord(centreY + radius * 0.8)}Z`;
    case 'diamond':
      return `M${xText} ${coord(centreY - radius * 1.2)}L${coord(centreX + radius)} ${coord(centreY)}L${xText} ${coord(centreY + radius * 1.2)}L${coord(centreX - radius)} ${coord(centreY)}Z`;
    case 'circle':
      return `M${coord(centreX - radius)} ${coord(centreY)}a${radius} ${radius} 0 1 0 ${2 * radius} 0a${radius} ${radius} 0 1 0 ${-2 * radius} 0Z`;
    case 'dot':
      return `M${coord(centreX - 2)} ${coord(centreY)}a2 2 0 1 0 4 0a2 2 0 1 0 -4 0Z`;
  }
}
