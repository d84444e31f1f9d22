/**
 * The tune report: `renderTuneReport(tuning)` turns the tune command's tuning.json into one
 * self-contained HTML page (grid summary, recall/alert-rate chart with precision as marker size,
 * the table of points, the recommendation and its reason, the caution). Rendering is pure; the
 * caller writes the file.
 */
import { tuneScatter, type ScatterPoint } from './charts.js';
import { esc } from './escape.js';
import { page, table, type Cell } from './html.js';
import { fmtNum } from './svg.js';
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
}

/** tuning.json as the tune report reads it (fields it does not know are ignored). */
export interface TuningDoc {
  points?: TunePointDoc[];
  /** Accepted as another name for `points`. */
  grid?: TunePointDoc[];
  recommended?: (Partial<TunePointDoc> & { reason?: string; index?: number }) | null;
  budgetPerHour?: number;
  input?: { path?: string; readings?: number; sensors?: number; hours?: number };
  labels?: { incidents?: number; warnings?: string[] };
  scoring?: { floodWindowMs?: number; floodLimit?: number };
  [key: string]: unknown;
}

const settingsLabel = (s: Record<string, unknown>): string =>
  Object.entries(s)
    .map(([k, v]) => `${k}=${typeof v === 'string' ? v : JSON.stringify(v)}`)
    .join(' ');

/** Array position of the recommended point: by its grid `index` when given, else the point with the same settings. */
function recommendedIndex(points: readonly TunePointDoc[], rec: TuningDoc['recommended']): number {
  if (!rec) return -1;
  if (typeof rec.index === 'number') {
    const byField = points.findIndex((p) => p.index === rec.index);
    if (byField >= 0) return byField;
    if (points.every((p) => p.index === undefined) && rec.index >= 0 && rec.index < points.length)
      return rec.index;
  }
  if (rec.settings === undefined) return -1;
  const want = settingsLabel(rec.settings);
  return points.findIndex((p) => settingsLabel(p.settings) === want);
}

const pct = (v: number | null | undefined): Cell =>
  v === null || v === undefined ? null : `${(v * 100).toFixed(1)} %`;

/** The tune report page for a tuning.json document. */
export function renderTuneReport(tuning: TuningDoc): string {
  const points = tuning.points ?? tuning.grid ?? [];
  const budget =
    typeof tuning.budgetPerHour === 'number' && tuning.budgetPerHour > 0
      ? tuning.budgetPerHour
      : ALERT_BUDGET_PER_HOUR;
  const recIdx = recommendedIndex(points, tuning.recommended);
  const kinds = [...new Set(points.flatMap((p) => Object.keys(p.recallByKind ?? {})))].sort();
  // Settings that differ between points get a column; the ones shared by all are listed once.
  const allKeys = [...new Set(points.flatMap((p) => Object.keys(p.settings)))];
  const same = (k: string): boolean =>
    points.every((p) => JSON.stringify(p.settings[k]) === JSON.stringify(points[0].settings[k]));
  const settingKeys = allKeys.filter((k) => !same(k));
  const fixedKeys = allKeys.filter(same);
  const varying = (s: Record<string, unknown>): Record<string, unknown> =>
    Object.fromEntries(settingKeys.map((k) => [k, s[k]]));

  const scatter: ScatterPoint[] = points.map((p, i) => ({
    label: settingsLabel(varying(p.settings)),
    alertsPerHour: p.alertsPerHour,
    recall: p.recall,
    precision: p.precision,
    recommended: i === recIdx,
  }));
  const withinBudget = points.filter((p) => p.alertsPerHour <= budget).length;
  const bestRecall = Math.max(...points.map((p) => p.recall ?? -1));

  // Table order: recall descending, then alert rate ascending (what an engineer scans for).
  const order = points
    .map((_, i) => i)
    .sort(
      (a, b) =>
        (points[b].recall ?? -1) - (points[a].recall ?? -1) ||
        points[a].alertsPerHour - points[b].alertsPerHour,
    );
  const rows = order.map((i) => {
    const p = points[i];
    return [
      ...settingKeys.map((k): Cell => (p.settings[k] === undefined ? null : String(p.settings[k]))),
      pct(p.recall),
      pct(p.precision),
      fmtNum(p.alertsPerHour),
      p.worst10min ?? null,
      p.flood === undefined ? null : p.flood ? 'flood' : 'no',
      ...kinds.map((k) => pct(p.recallByKind?.[k])),
    ];
  });
  const k0 = settingKeys.length;
  const numericCols = [k0, k0 + 1, k0 + 2, k0 + 3, ...kinds.map((_, j) => k0 + 5 + j)];
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
    fixedKeys.length > 0
      ? `<p class="note">Same at every point: ${esc(settingsLabel(Object.fromEntries(fixedKeys.map((k) => [k, points[0].settings[k]]))))}.</p>`
      : '';

  const rec = recIdx >= 0 ? points[recIdx] : null;
  const recHtml = rec
    ? `<p><strong>${esc(settingsLabel(varying(rec.settings)) || settingsLabel(rec.settings))}</strong>: recall ${esc(pct(rec.recall) ?? '–')}, precision ${esc(pct(rec.precision) ?? '–')}, ${esc(fmtNum(rec.alertsPerHour))} alerts/h${rec.worst10min !== undefined && rec.worst10min !== null ? `, worst 10 minutes ${esc(rec.worst10min)} raised` : ''}.</p>`
    : '<p>No point was recommended.</p>';
  const reason = tuning.recommended?.reason ? `<p>Reason: ${esc(tuning.recommended.reason)}</p>` : '';

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
    recHtml,
    reason,
    '<h2>Recall against alert rate</h2>',
    '<p class="note">Each dot is one grid point: alerts per hour (log scale) across, recall up; bigger and darker dots have higher precision. The dashed line is the alert budget; the ringed dot is the recommendation.</p>',
    tuneScatter(scatter, budget),
    '<h2>All points</h2>',
    flood,
    '<p class="note">Sorted by recall (highest first), then by alert rate (lowest first). The recommended row is highlighted.</p>',
    table(
      [
        ...settingKeys,
        'recall',
        'precision',
        'alerts/h',
        'worst 10 min',
        'flood',
        ...kinds.map((k) => `recall ${k}`),
      ],
      rows,
      {
        pick: (ri) => order[ri] === recIdx,
        numeric: numericCols,
      },
    ),
  ].join('\n');
  return page(
    'streamfence tuning report',
    `${points.length} grid points, alert budget ${fmtNum(budget)}/h`,
    body,
  );
}
