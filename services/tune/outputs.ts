/**
 * The files tune writes into its output directory:
 *   tuning.json      every grid point with its scores, and the recommendation (shape: TuningResult)
 *   tuning.csv       the same points as a table
 *   recommended.json a complete config file ({defaults, sensors}) for replay/run --config
 *   report.html      the HTML report (libs/report/tune-report)
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { renderTuneReport } from '../../libs/report/tune-report.js';
import { StreamfenceError } from '../../libs/errors/index.js';
import type { AlertKpis } from '../../libs/kpi/alert-kpis.js';
import type { GridPoint } from '../../libs/tuning/grid.js';
import { fileProblem } from '../fs-errors.js';

export const TUNING_FORMAT_VERSION = 1;

export interface PointResult {
  index: number;
  settings: GridPoint;
  recall: number | null;
  precision: number | null;
  /** Raised alerts per hour of data (tune refuses input with a zero time span, so always a number). */
  alertsPerHour: number;
  worst10min: number;
  flood: boolean;
  raised: number;
  trueRaised: number;
  incidents: number;
  caught: number;
  /** Per fault kind: caught / incidents of that kind (dropouts included here). */
  recallByKind: Record<string, number | null>;
  countsByKind: Record<string, { incidents: number; caught: number }>;
  /** Every raised alert per caught incident, raised / caught (null: none caught); the rule ranks by it. */
  alertsPerCaught: number | null;
  /** Alert-system health (libs/kpi): raises inside caught incidents per caught incident (null: none caught). */
  raisesPerCaught: number | null;
  /** Sensors that chattered (3 raises within 60 s) and the raises in those runs. */
  chatteringSensors: number;
  chatteringRaises: number;
  /** Alerts cleared within 60 s of their raise. */
  fleeting: number;
  /** Share of aligned 10-minute periods with more than the flood level raised (null: no periods). */
  floodShare: number | null;
}

/** The documented shape of tuning.json (stable: fields are only ever added). */
export type TuningResult = {
  formatVersion: number;
  engineVersion: string;
  notice: string;
  input: {
    path: string;
    format: string;
    readings: number;
    rejected: Record<string, number>;
    sensors: number;
    firstTs: string | null;
    lastTs: string | null;
    hours: number;
    /** Median time between one sensor's readings (clear delays counted in readings use it); null when no sensor read twice. */
    medianIntervalMs: number | null;
  };
  labels: { path: string; incidents: number; byKind: Record<string, number>; warnings: string[] };
  scoring: { graceMs: number; floodWindowMs: number; floodLimit: number; excludedFromRecall: string[] };
  budgetPerHour: number;
  /** The grid that was searched, in --grid syntax, and its number of points. */
  gridSpec: string;
  pointCount: number;
  /** Combinations left out because their deadband leaves no way to clear an alert. */
  skippedPoints: number;
  baseConfig: Record<string, unknown>;
  points: PointResult[];
  /** The recommended point, its reason and its full health figures (the report's health section). */
  recommended: (PointResult & { reason: string; withinBudget: boolean; kpis: AlertKpis }) | null;
  /** The point the earlier recall-first rule picks (for comparison; null for an empty grid). */
  recallFirstIndex: number | null;
};

const CSV_COLUMNS = [
  'index',
  'fenceK',
  'outerK',
  'zLimit',
  'zCritical',
  'trigger',
  'raiseAfter',
  'raiseWindow',
  'clearAfter',
  'flatlineAfter',
  'deadband',
  'clearDelay',
  'recall',
  'precision',
  'alertsPerHour',
  'worst10min',
  'flood',
  'raised',
  'trueRaised',
  'caught',
  'incidents',
  'alertsPerCaught',
  'raisesPerCaught',
  'chatteringSensors',
  'chatteringRaises',
  'fleeting',
  'floodShare',
] as const;

const cell = (v: unknown): string => (v === null || v === undefined ? '' : String(v));

/** tuning.csv: one row per point (clearDelay in milliseconds), recall per kind, the recommended mark. */
export function tuningCsv(t: TuningResult): string {
  const kinds = Object.keys(t.labels.byKind).sort();
  const head = [...CSV_COLUMNS, ...kinds.map((k) => `recall_${k}`), 'recommended'];
  const rows = [head.join(',')];
  for (const p of t.points) {
    const flat: Record<string, unknown> = { ...p.settings, ...p };
    rows.push(
      [
        ...CSV_COLUMNS.map((c) => cell(flat[c])),
        ...kinds.map((k) => cell(p.recallByKind[k] ?? null)),
        t.recommended?.index === p.index ? 'yes' : '',
      ].join(','),
    );
  }
  return `${rows.join('\n')}\n`;
}

async function write(path: string, text: string): Promise<void> {
  try {
    await writeFile(path, text);
  } catch (e) {
    throw new StreamfenceError(
      'OUTPUT_UNWRITABLE',
      `cannot write "${path}": ${fileProblem(e)}; choose another --out folder`,
    );
  }
}

/** The HTML report (libs/report/tune-report) of the tuning result, to DIR/report.html. */
export async function writeReport(dir: string, t: TuningResult): Promise<string> {
  const out = join(dir, 'report.html');
  await write(out, renderTuneReport(t));
  return out;
}

/** Create the --out folder (and its parents); a path that cannot be a folder is a one-line error. */
export async function prepareOutDir(dir: string): Promise<void> {
  try {
    await mkdir(dir, { recursive: true });
  } catch (e) {
    throw new StreamfenceError(
      'OUTPUT_UNWRITABLE',
      `cannot create the folder "${dir}": ${fileProblem(e)}; choose another --out folder`,
      { cause: e },
    );
  }
}

/** Write tuning.json, tuning.csv, recommended.json (when there is one) and report.html into DIR. */
export async function writeOutputs(
  dir: string,
  t: TuningResult,
  recommendedConfig: Record<string, unknown> | null,
): Promise<{ files: string[]; report: string }> {
  await prepareOutDir(dir);
  const files = [join(dir, 'tuning.json'), join(dir, 'tuning.csv')];
  await write(files[0], `${JSON.stringify(t, null, 2)}\n`);
  await write(files[1], tuningCsv(t));
  if (recommendedConfig !== null) {
    files.push(join(dir, 'recommended.json'));
    await write(files[2], `${JSON.stringify(recommendedConfig, null, 2)}\n`);
  }
  const report = await writeReport(dir, t);
  files.push(report);
  return { files, report };
}
