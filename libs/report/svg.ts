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
export type Scale = (v: number) => number;

/** The linear map from [d0, d1] to [r0, r1] (a zero-width domain maps as if it were 1 wide). */
export function linearScale(d0: number, d1: number, r0: number, r1: number): Scale {
  const span = d1 - d0 || 1;
  return (v) => r0 + ((v - d0) / span) * (r1 - r0);
}

/** Log10 scale; values <= 0 are drawn at the lower end. */
export function logScale(d0: number, d1: number, r0: number, r1: number): Scale {
  const l0 = Math.log10(d0);
  const span = Math.log10(d1) - l0 || 1;
  return (v) => (v <= 0 ? r0 : r0 + ((Math.log10(v) - l0) / span) * (r1 - r0));
}

/** About `count` round tick values covering [min, max] (steps of 1, 2 or 5 times a power of ten). */
export function niceTicks(min: number, max: number, count = 5): number[] {
  if (!Number.isFinite(min) || !Number.isFinite(max)) return [];
  if (min === max) return [min];
  const raw = (max - min) / Math.max(1, count);
  const mag = 10 ** Math.floor(Math.log10(raw));
  const step = [1, 2, 5, 10].map((m) => m * mag).find((s) => s >= raw) ?? 10 * mag;
  const out: number[] = [];
  for (let v = Math.ceil(min / step) * step; v <= max + step * 1e-9; v += step)
    out.push(Math.abs(v) < step * 1e-9 ? 0 : v);
  return out;
}

/** Padded value domain [lo, hi] for a set of values (ignores non-finite ones). */
export function valueDomain(values: Iterable<number>, pad = 0.06): [number, number] {
  let lo = Infinity;
  let hi = -Infinity;
  for (const v of values) {
    if (!Number.isFinite(v)) continue;
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  if (lo > hi) return [0, 1];
  if (lo === hi) return [lo - 1, hi + 1];
  const p = (hi - lo) * pad;
  return [lo - p, hi + p];
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
  for (let t = Math.ceil(from / step) * step; t <= to; t += step) ticks.push(t);
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
  x: { ticks: number[]; scale: Scale; label: (v: number) => string; title?: string },
  y: { ticks: number[]; scale: Scale; label: (v: number) => string; title?: string },
): string {
  const parts: string[] = [];
  const x0 = frame.left;
  const x1 = frame.width - frame.right;
  const y0 = frame.height - frame.bottom;
  const y1 = frame.top;
  for (const t of y.ticks) {
    const py = y.scale(t);
    if (py < y1 - 0.5 || py > y0 + 0.5) continue;
    parts.push(`<line class="grid" x1="${x0}" x2="${x1}" y1="${coord(py)}" y2="${coord(py)}"/>`);
    parts.push(
      `<text class="tick" x="${x0 - 6}" y="${coord(py + 4)}" text-anchor="end">${esc(y.label(t))}</text>`,
    );
  }
  for (const t of x.ticks) {
    const px = x.scale(t);
    if (px < x0 - 0.5 || px > x1 + 0.5) continue;
    parts.push(`<line class="grid" x1="${coord(px)}" x2="${coord(px)}" y1="${y1}" y2="${y0}"/>`);
    // A label centred on the right edge would be cut off by the frame.
    if (px > frame.width - 36) continue;
    parts.push(
      `<text class="tick" x="${coord(px)}" y="${y0 + 16}" text-anchor="middle">${esc(x.label(t))}</text>`,
    );
  }
  parts.push(`<rect class="frame" x="${x0}" y="${y1}" width="${x1 - x0}" height="${y0 - y1}"/>`);
  if (x.title)
    parts.push(
      `<text class="axis-title" x="${x1}" y="${frame.height - 2}" text-anchor="end">${esc(x.title)}</text>`,
    );
  if (y.title) {
    parts.push(
      `<text class="axis-title" transform="translate(12 ${y1 + (y0 - y1) / 2}) rotate(-90)" text-anchor="middle">${esc(y.title)}</text>`,
    );
  }
  return parts.join('');
}

/** Path data for a polyline; NaN points break the line into separate runs. */
export function linePath(points: readonly (readonly [number, number])[]): string {
  let path = '';
  let pen = false;
  for (const [px, py] of points) {
    if (!Number.isFinite(px) || !Number.isFinite(py)) {
      pen = false;
      continue;
    }
    path += `${pen ? 'L' : 'M'}${coord(px)} ${coord(py)}`;
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
  for (const p of points) {
    if (p.every(Number.isFinite)) run.push(p);
    else flush();
  }
  flush();
  return path;
}

/** Marker shapes: severity is told by shape as well as colour. */
export function markerPath(
  shape: 'triangle' | 'diamond' | 'circle' | 'dot',
  px: number,
  py: number,
  radius = 5,
): string {
  const x = coord(px);
  switch (shape) {
    case 'triangle':
      return `M${x} ${coord(py - radius)}L${coord(px + radius)} ${coord(py + radius * 0.8)}L${coord(px - radius)} ${coord(py + radius * 0.8)}Z`;
    case 'diamond':
      return `M${x} ${coord(py - radius * 1.2)}L${coord(px + radius)} ${coord(py)}L${x} ${coord(py + radius * 1.2)}L${coord(px - radius)} ${coord(py)}Z`;
    case 'circle':
      return `M${coord(px - radius)} ${coord(py)}a${radius} ${radius} 0 1 0 ${2 * radius} 0a${radius} ${radius} 0 1 0 ${-2 * radius} 0Z`;
    case 'dot':
      return `M${coord(px - 2)} ${coord(py)}a2 2 0 1 0 4 0a2 2 0 1 0 -4 0Z`;
  }
}
