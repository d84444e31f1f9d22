/**
 * The tune report: `renderTuneReport(tuning)` turns the tune command's tuning.json into one
 * self-contained HTML page (grid summary, the recommendation and its reason, the recall/alert-rate
 * chart with precision as marker size, the trade-off chart of raised alerts per caught incident
 * against recall, the recommended point's alert-system health, the table of points, the caution).
 * Rendering is pure; the caller writes the file.
 */
import { formatDuration } from '../config/duration.js';
import type { AlertKpis } from '../kpi/alert-kpis.js';
import { tuneScatter, type ScatterPoint } from './charts.js';
import { esc } from './escape.js';
import { healthSection } from './health.js';
import { page, table, type Cell } from './html.js';
import { fmtNum } from './svg.js';
import { tradeoffChart, type TradeoffPoint } from './tradeoff-chart.js';
import { ALERT_BUDGET_PER_HOUR, FLOOD_WINDOW_MS } from '../schema/vocabulary.js';

/** One grid point as the tune command writes it (fields the report reads; others are ignored). */
export interface TunePointDoc {
  /** Position in the grid (tune writes it; the array position is used when absent). */
  index?: number;
  settings: Record<string, unknown>;
  recall: number | null;
  precision: number | null;
  alertsPerHour: number;
  worst10min?: number | null;
  flood?: boolean;
  raised?: number;
  recallByKind?: Record<string, number | null>;
  /** raised / caught (the noise-aware rule ranks by it). */
  alertsPerCaught?: number | null;
  /** Raises inside caught incidents per caught incident (libs/kpi). */
  raisesPerCaught?: number | null;
  chatteringRaises?: number;
}

/** tuning.json as the tune report reads it (fields it does not know are ignored). */
export interface TuningDoc {
  points?: TunePointDoc[];
  /** Accepted as another name for `points`. */
  grid?: TunePointDoc[];
  recommended?: (Partial<TunePointDoc> & { reason?: string; index?: number; kpis?: AlertKpis }) | null;
  /** The grid index of the point the earlier recall-first rule picks. */
  recallFirstIndex?: number | null;
  budgetPerHour?: number;
  input?: { path?: string; readings?: number; sensors?: number; hours?: number };
  labels?: { incidents?: number; warnings?: string[] };
  scoring?: { floodWindowMs?: number; floodLimit?: number };
  [key: string]: unknown;
}

/** A setting's value in words: clear delays as durations, the rest as written. */
const settingText = (key: string, value: unknown): string =>
  key === 'clearDelay' && typeof value === 'number'
    ? formatDuration(value)
    : typeof value === 'string'
      ? value
      : JSON.stringify(value);

const settingsLabel = (s: Record<string, unknown>): string =>
  Object.entries(s)
    .map(([k, v]) => `${k}=${settingText(k, v)}`)
    .join(' ');

/** Array position of a point given its grid `index` (the array position when points carry none). */
function positionOf(points: readonly TunePointDoc[], index: number | null | undefined): number {
  if (typeof index !== 'number') return -1;
  const byField = points.findIndex((p) => p.index === index);
  if (byField >= 0) return byField;
  return points.every((p) => p.index === undefined) && index >= 0 && index < points.length ? index : -1;
}

/** Array position of the recommended point: by its grid `index` when given, else the point with the same settings. */
function recommendedIndex(points: readonly TunePointDoc[], rec: TuningDoc['recommended']): number {
  if (!rec) return -1;
  const byIndex = positionOf(points, rec.index);
  if (byIndex >= 0 || rec.settings === undefined) return byIndex;
  const want = settingsLabel(rec.settings);
  return points.findIndex((p) => settingsLabel(p.settings) === want);
}

const pct = (v: number | null | undefined): Cell =>
  v === null || v === undefined ? null : `${(v * 100).toFixed(1)} %`;
const ratio = (v: number | null | undefined): Cell => (v === null || v === undefined ? null : fmtNum(v));

/** What the page's parts share: the points, the picks, the budget and which settings vary. */
interface ReportContext {
  points: TunePointDoc[];
  budget: number;
  recIdx: number;
  recallFirstIdx: number;
  settingKeys: string[];
  fixedKeys: string[];
  kinds: string[];
  /** Whether the points carry the noise figures (tuning.json from before them does not). */
  noise: boolean;
}

function context(tuning: TuningDoc): ReportContext {
  const points = tuning.points ?? tuning.grid ?? [];
  const budget =
    typeof tuning.budgetPerHour === 'number' && tuning.budgetPerHour > 0
      ? tuning.budgetPerHour
      : ALERT_BUDGET_PER_HOUR;
  // Settings that differ between points get a column; the ones shared by all are listed once.
  const allKeys = [...new Set(points.flatMap((p) => Object.keys(p.settings)))];
  const same = (k: string): boolean =>
    points.every((p) => JSON.stringify(p.settings[k]) === JSON.stringify(points[0].settings[k]));
  return {
    points,
    budget,
    recIdx: recommendedIndex(points, tuning.recommended),
    recallFirstIdx: positionOf(points, tuning.recallFirstIndex),
    settingKeys: allKeys.filter((k) => !same(k)),
    fixedKeys: allKeys.filter(same),
    kinds: [...new Set(points.flatMap((p) => Object.keys(p.recallByKind ?? {})))].sort(),
    noise: points.some((p) => p.alertsPerCaught !== undefined),
  };
}

const varying = (ctx: ReportContext, s: Record<string, unknown>): Record<string, unknown> =>
  Object.fromEntries(ctx.settingKeys.map((k) => [k, s[k]]));

/** The table of every point: recall first (highest first), then alert rate (lowest first). */
function pointsTable(ctx: ReportContext): string {
  const { points, settingKeys, kinds } = ctx;
  const order = points
    .map((_, i) => i)
    .sort(
      (a, b) =>
        (points[b].recall ?? -1) - (points[a].recall ?? -1) ||
        points[a].alertsPerHour - points[b].alertsPerHour,
    );
  const noiseHead = ctx.noise ? ['raised per caught', 'repeats per caught', 'chattering raises'] : [];
  const rows = order.map((index) => {
    const point = points[index];
    const noise: Cell[] = ctx.noise
      ? [ratio(point.alertsPerCaught), ratio(point.raisesPerCaught), point.chatteringRaises ?? null]
      : [];
    return [
      ...settingKeys.map((k): Cell =>
        point.settings[k] === undefined ? null : settingText(k, point.settings[k]),
      ),
      pct(point.recall),
      pct(point.precision),
      fmtNum(point.alertsPerHour),
      point.worst10min ?? null,
      point.flood === undefined ? null : point.flood ? 'flood' : 'no',
      ...noise,
      ...kinds.map((k) => pct(point.recallByKind?.[k])),
    ];
  });
  const metricsStart = settingKeys.length;
  const numeric = [
    metricsStart,
    metricsStart + 1,
    metricsStart + 2,
    metricsStart + 3,
    ...noiseHead.map((_, j) => metricsStart + 5 + j),
  ];
  for (let j = 0; j < kinds.length; j++) numeric.push(metricsStart + 5 + noiseHead.length + j);
  return table(
    [
      ...settingKeys,
      'recall',
      'precision',
      'alerts/h',
      'worst 10 min',
      'flood',
      ...noiseHead,
      ...kinds.map((k) => `recall ${k}`),
    ],
    rows,
    { pick: (ri) => order[ri] === ctx.recIdx, numeric },
  );
}

/** The recommendation paragraph, its reason and how it compares with the recall-first pick. */
function recommendationHtml(ctx: ReportContext, tuning: TuningDoc): string {
  const rec = ctx.recIdx >= 0 ? ctx.points[ctx.recIdx] : null;
  if (rec === null) return '<p>No point was recommended.</p>';
  const name = (p: TunePointDoc) => settingsLabel(varying(ctx, p.settings)) || settingsLabel(p.settings);
  const figures = (p: TunePointDoc) =>
    `recall ${esc(pct(p.recall) ?? '–')}, precision ${esc(pct(p.precision) ?? '–')}, ${esc(fmtNum(p.alertsPerHour))} alerts/h` +
    (p.alertsPerCaught !== undefined
      ? `, ${esc(ratio(p.alertsPerCaught) ?? '–')} raised per caught incident`
      : '') +
    (p.worst10min !== undefined && p.worst10min !== null
      ? `, worst 10 minutes ${esc(p.worst10min)} raised`
      : '') +
    (p.flood ? ' (flood)' : '');
  const parts = [`<p><strong>${esc(name(rec))}</strong>: ${figures(rec)}.</p>`];
  if (tuning.recommended?.reason) parts.push(`<p>Reason: ${esc(tuning.recommended.reason)}</p>`);
  const old = ctx.recallFirstIdx >= 0 ? ctx.points[ctx.recallFirstIdx] : null;
  if (old !== null && ctx.recallFirstIdx !== ctx.recIdx)
    parts.push(
      `<p class="note">The recall-first rule (best recall, then precision) would pick ${esc(name(old))}: ${figures(old)}.</p>`,
    );
  else if (old !== null) parts.push('<p class="note">The recall-first rule picks the same point.</p>');
  return parts.join('\n');
}

/** The two charts: recall against alert rate, and recall against raised alerts per caught incident. */
function chartsHtml(ctx: ReportContext): string {
  const scatter: ScatterPoint[] = ctx.points.map((p, i) => ({
    label: settingsLabel(varying(ctx, p.settings)),
    alertsPerHour: p.alertsPerHour,
    recall: p.recall,
    precision: p.precision,
    recommended: i === ctx.recIdx,
  }));
  const parts = [
    '<h2>Recall against alert rate</h2>',
    '<p class="note">Each dot is one grid point: alerts per hour (log scale) across, recall up; bigger and darker dots have higher precision. The dashed line is the alert budget; the ringed dot is the recommendation.</p>',
    tuneScatter(scatter, ctx.budget),
  ];
  if (!ctx.noise) return parts.join('\n');
  const tradeoff: TradeoffPoint[] = ctx.points.map((p, i) => ({
    label: settingsLabel(varying(ctx, p.settings)),
    recall: p.recall,
    alertsPerCaught: p.alertsPerCaught ?? null,
    withinBudget: p.alertsPerHour <= ctx.budget,
    flood: p.flood === true,
    recommended: i === ctx.recIdx,
    recallFirst: i === ctx.recallFirstIdx,
  }));
  parts.push(
    '<h2>Trade-off: repeated raises against recall</h2>',
    '<p class="note">What the recommendation weighs: raised alerts per caught incident across (1 is one alert for each incident caught; repeated and false raises move a point right), recall up. Filled dots are within the budget, hollow dots over it, squares had a flood. The ringed point is the recommendation, the boxed one the pick of the recall-first rule.</p>',
    tradeoffChart(tradeoff),
  );
  return parts.join('\n');
}

/** The tune report page for a tuning.json document. */
export function renderTuneReport(tuning: TuningDoc): string {
  const ctx = context(tuning);
  const { points, budget } = ctx;
  const withinBudget = points.filter((p) => p.alertsPerHour <= budget).length;
  const bestRecall = Math.max(...points.map((p) => p.recall ?? -1));
  const inp = tuning.input;
  const inputLine = inp
    ? `<p>Input ${esc(inp.path ?? '')}: ${esc(inp.readings ?? '–')} readings from ${esc(inp.sensors ?? '–')} sensors over ${esc(fmtNum(inp.hours ?? NaN))} h${tuning.labels?.incidents !== undefined ? `, ${esc(tuning.labels.incidents)} labelled incidents` : ''}.</p>`
    : '';
  const labelNotes = (tuning.labels?.warnings ?? [])
    .map((w) => `<p class="warning">Labels: ${esc(w)}.</p>`)
    .join('');
  const flood =
    tuning.scoring?.floodLimit !== undefined
      ? `<p class="note">Flood: more than ${esc(tuning.scoring.floodLimit)} alerts raised within ${esc(fmtNum((tuning.scoring.floodWindowMs ?? FLOOD_WINDOW_MS) / 60_000))} minutes.</p>`
      : '';
  const fixed =
    ctx.fixedKeys.length > 0
      ? `<p class="note">Same at every point: ${esc(settingsLabel(Object.fromEntries(ctx.fixedKeys.map((k) => [k, points[0].settings[k]]))))}.</p>`
      : '';
  const kpis = tuning.recommended?.kpis;
  const health = kpis
    ? ['<h2>Alert-system health of the recommended point</h2>', healthSection(kpis)].join('\n')
    : '';
  const body = [
    '<h2>Grid</h2>',
    inputLine,
    labelNotes,
    table(
      ['grid points', 'within budget', 'best recall', 'budget'],
      [[points.length, withinBudget, pct(bestRecall < 0 ? null : bestRecall), `${fmtNum(budget)} alerts/h`]],
      { numeric: [0, 1, 2] },
    ),
    fixed,
    '<h2>Recommendation</h2>',
    recommendationHtml(ctx, tuning),
    chartsHtml(ctx),
    health,
    '<h2>All points</h2>',
    flood,
    '<p class="note">Sorted by recall (highest first), then by alert rate (lowest first). The recommended row is highlighted.</p>',
    pointsTable(ctx),
  ].join('\n');
  return page(
    'streamfence tuning report',
    `${points.length} grid points, alert budget ${fmtNum(budget)}/h`,
    body,
  );
}
