/**
 * streamfence tune, the job: read the input once into shared columns, read the labels, replay
 * every grid point on worker threads, score each, recommend one and write the outputs.
 */
import { readFile } from 'node:fs/promises';
import { availableParallelism } from 'node:os';
import { configToJson, type EngineConfig } from '../../libs/config/config.js';
import { ENGINE_VERSION } from '../../libs/engine/engine.js';
import { StreamfenceError } from '../../libs/errors/index.js';
import { NOTICE } from '../../libs/schema/notice.js';
import { ALERT_BUDGET_PER_HOUR, FLOOD_LIMIT, FLOOD_WINDOW_MS } from '../../libs/schema/vocabulary.js';
import { labelWarnings, parseLabelsCsv, type Incident } from '../../libs/scoring/labels.js';
import { DEFAULT_GRACE_MS, NO_KIND, type ScoreOptions } from '../../libs/scoring/score.js';
import { applyPoint } from '../../libs/tuning/apply.js';
import { formatDuration } from '../../libs/config/duration.js';
import { medianReadingInterval, spanOf } from '../../libs/tuning/columns.js';
import type { PointEvaluation } from '../../libs/tuning/evaluate.js';
import {
  DEFAULT_GRID_SPEC,
  expandGrid,
  formatGridSpec,
  gridSize,
  parseGridSpec,
  type GridPoint,
  type GridSpec,
} from '../../libs/tuning/grid.js';
import { recallFirst, recommend } from '../../libs/tuning/recommend.js';
import { Progress, formatCount, formatSeconds, type ProgressSink } from '../progress.js';
import { loadEngineConfig } from '../setup/config-file.js';
import { loadColumns, type LoadedInput } from './load.js';
import { runGrid } from './pool.js';
import {
  prepareOutDir,
  writeOutputs,
  TUNING_FORMAT_VERSION,
  type PointResult,
  type TuningResult,
} from './outputs.js';
import { checkInputFile } from '../replay/input.js';
import { fileProblem } from '../fs-errors.js';

export interface TuneOptions {
  input: string;
  format?: string;
  labels: string;
  config?: string;
  grid?: string;
  budget?: number;
  out: string;
  workers?: number;
  graceMs?: number;
  /** Where progress and the summary go (default process.stderr). */
  stream?: ProgressSink;
  /** Called once the arguments, config, labels, input and output folder have passed their checks. */
  onStart?: () => void;
}

export interface TuneOutcome {
  result: TuningResult;
  files: string[];
  report: string;
  summary: string;
  seconds: number;
}

async function readText(path: string, what: string): Promise<string> {
  try {
    return await readFile(path, 'utf8');
  } catch (e) {
    throw new StreamfenceError('INPUT_UNREADABLE', `cannot read ${what} "${path}": ${fileProblem(e)}`);
  }
}

/**
 * Kinds left out of the headline recall: dropouts, unless the base config watches for silent
 * sensors (a `staleAfter` anywhere), since no other rule can catch a sensor that sends nothing.
 */
export function excludedFromRecall(base: EngineConfig): string[] {
  const watchesSilence =
    base.defaults.staleAfter !== null ||
    base.sensors.some(
      (rule) => rule.overrides.staleAfter !== undefined && rule.overrides.staleAfter !== null,
    );
  return watchesSilence ? [] : ['dropout'];
}

/** A clear delay the check before loading assumes for counts of readings (the real one needs the data). */
const PROVISIONAL_INTERVAL_MS = 1000;

/** One point's row in tuning.json: its settings, scores and health figures. */
export function pointResult(index: number, settings: GridPoint, evaluation: PointEvaluation): PointResult {
  const { score: s, kpis } = evaluation;
  return {
    index,
    settings,
    recall: s.recall,
    precision: s.precision,
    alertsPerHour: s.alertsPerHour ?? 0,
    worst10min: s.worst10min,
    flood: s.flood,
    raised: s.raised,
    trueRaised: s.trueRaised,
    incidents: s.incidents,
    caught: s.caught,
    recallByKind: Object.fromEntries(Object.entries(s.recallByKind).map(([k, v]) => [k, v.recall])),
    countsByKind: Object.fromEntries(
      Object.entries(s.recallByKind).map(([k, v]) => [k, { incidents: v.incidents, caught: v.caught }]),
    ),
    alertsPerCaught: s.caught === 0 ? null : s.raised / s.caught,
    raisesPerCaught: kpis.raisesPerCaught,
    chatteringSensors: kpis.chattering.sensors,
    chatteringRaises: kpis.chattering.raises,
    fleeting: kpis.fleeting,
    floodShare: kpis.flood.share,
  };
}

/** The readings as columns, refused when nothing valid was read or all share one time. */
async function loadInput(o: TuneOptions, stream: ProgressSink): Promise<LoadedInput> {
  const reading = new Progress({ unit: 'readings', stream });
  const loaded = await loadColumns(o.input, o.format, (n) => reading.update(n));
  const cols = loaded.columns;
  if (cols.count === 0) {
    const why = loaded.firstReject ? ` (line ${loaded.firstReject.line}: ${loaded.firstReject.detail})` : '';
    throw new StreamfenceError('INPUT_UNREADABLE', `"${o.input}" has no valid readings${why}`);
  }
  const { first, last } = spanOf(cols);
  if (last === first) {
    throw new StreamfenceError(
      'INPUT_UNREADABLE',
      `"${o.input}": all readings share one timestamp; tuning needs history spanning some time`,
    );
  }
  return loaded;
}

/** The grid's points for this data: clear delays counted in readings use its median reading interval. */
function pointsForData(
  spec: GridSpec,
  base: EngineConfig,
  interval: number | null,
  input: string,
): GridPoint[] {
  const counted = (spec.clearDelay ?? []).some((d) => 'readings' in d);
  if (counted && interval === null) {
    throw new StreamfenceError(
      'INPUT_UNREADABLE',
      `"${input}": no sensor has two readings at different times, so a clear delay counted in readings has no length; give clearDelay as durations in --grid`,
    );
  }
  return expandGrid(spec, base.defaults, interval ?? undefined);
}

/**
 * The console line saying which time-of-day profile every grid point keeps: the grid varies the
 * judging thresholds only, never `profile`, `timeZone` or `profileDays` (a profile changes what the
 * baseline is, not how strictly it is applied); compare profiles by tuning once per config
 * (README "Daily profiles on history").
 */
export function profileNote(base: EngineConfig): string {
  const d = base.defaults;
  const own =
    d.profile === 'daily'
      ? `profile daily, timeZone ${d.timeZone}, profileDays ${d.profileDays}`
      : 'profile none';
  const overridden = base.sensors.filter((rule) =>
    (['profile', 'timeZone', 'profileDays'] as const).some((key) => rule.overrides[key] !== undefined),
  );
  const rules =
    overridden.length === 0
      ? ''
      : ` and the profile overrides of ${overridden.map((rule) => `"${rule.match}"`).join(', ')}`;
  return `streamfence tune: every point keeps the config's profile setting (${own}${rules}); the grid does not vary profile, timeZone or profileDays: tune once per setting to compare them`;
}

/** Replay and score the labelled history with every grid point, recommend one and write the outputs. */
export async function runTune(o: TuneOptions): Promise<TuneOutcome> {
  const stream = o.stream ?? process.stderr;
  const budget = o.budget ?? ALERT_BUDGET_PER_HOUR;
  const workers = o.workers ?? availableParallelism();
  const base: EngineConfig = loadEngineConfig(o.config);
  const spec = parseGridSpec(o.grid ?? DEFAULT_GRID_SPEC);
  // Fail on a point the config would refuse before spending time on the input.
  expandGrid(spec, base.defaults, PROVISIONAL_INTERVAL_MS).forEach((p) => applyPoint(base, p));
  const incidents: Incident[] = parseLabelsCsv(await readText(o.labels, 'labels'), o.labels);
  checkInputFile(o.input);
  // The output folder is made now, so a path that cannot take it fails before the grid runs.
  await prepareOutDir(o.out);
  o.onStart?.();
  stream.write(`${profileNote(base)}\n`);

  const started = performance.now();
  const loaded = await loadInput(o, stream);
  const cols = loaded.columns;
  const { first, last } = spanOf(cols);
  const interval = medianReadingInterval(cols);
  const points = pointsForData(spec, base, interval, o.input);
  const scoreOptions: ScoreOptions = {
    graceMs: o.graceMs ?? DEFAULT_GRACE_MS,
    dataStart: first,
    dataEnd: last,
    excludeFromRecall: excludedFromRecall(base),
  };

  // Live line: readings replayed over all points so far, their rate, and the ETA from points done.
  const gridProgress = new Progress({ unit: 'readings', total: points.length, stream });
  const evaluations = await runGrid(cols, base, points, incidents, scoreOptions, {
    workers,
    onPoint: (done) => gridProgress.update(done * cols.count, done),
  });
  const results = evaluations.map((e, index) => pointResult(index, points[index], e));
  const rec = recommend(results, budget);
  const warnings = labelWarnings(incidents, new Set(cols.names), first, last);
  for (const w of warnings) stream.write(`streamfence tune: warning: ${w}\n`);
  const result = tuningResult({ o, loaded, interval, incidents, warnings, scoreOptions, budget, base, spec });
  result.points = results;
  result.pointCount = points.length;
  result.recommended =
    rec === null
      ? null
      : {
          ...results[rec.index],
          reason: rec.reason,
          withinBudget: rec.withinBudget,
          kpis: evaluations[rec.index].kpis,
        };
  result.recallFirstIndex = recallFirst(results, budget);
  result.skippedPoints = gridSize(spec) - points.length;
  const recommendedConfig = rec === null ? null : configToJson(applyPoint(base, points[rec.index]));
  const { files, report } = await writeOutputs(o.out, result, recommendedConfig);

  const seconds = (performance.now() - started) / 1000;
  for (const line of comparisonTable(result)) stream.write(`${line}\n`);
  const summary =
    `streamfence tune: ${points.length} points x ${formatCount(cols.count)} readings in ${formatSeconds(seconds)} ` +
    `(${formatCount((points.length * cols.count) / Math.max(seconds, 1e-9))} readings/s, ${workers} workers); ` +
    `${recommendationText(result.recommended)}; wrote ${o.out}`;
  gridProgress.finish(summary);
  return { result, files, report, summary, seconds };
}

/** What tuningResult needs besides the points. */
interface ResultParts {
  o: TuneOptions;
  loaded: LoadedInput;
  interval: number | null;
  incidents: readonly Incident[];
  warnings: string[];
  scoreOptions: ScoreOptions;
  budget: number;
  base: EngineConfig;
  spec: GridSpec;
}

/** tuning.json's header fields (input, labels, scoring, grid); points and picks are filled in after. */
function tuningResult(parts: ResultParts): TuningResult {
  const { o, loaded, scoreOptions } = parts;
  const cols = loaded.columns;
  const byKind: Record<string, number> = {};
  for (const i of parts.incidents) byKind[i.kind || NO_KIND] = (byKind[i.kind || NO_KIND] ?? 0) + 1;
  return {
    formatVersion: TUNING_FORMAT_VERSION,
    engineVersion: ENGINE_VERSION,
    notice: NOTICE,
    input: {
      path: o.input,
      format: loaded.format,
      readings: cols.count,
      rejected: loaded.rejected,
      sensors: cols.names.length,
      firstTs: new Date(scoreOptions.dataStart).toISOString(),
      lastTs: new Date(scoreOptions.dataEnd).toISOString(),
      hours: (scoreOptions.dataEnd - scoreOptions.dataStart) / 3_600_000,
      medianIntervalMs: parts.interval,
    },
    labels: { path: o.labels, incidents: parts.incidents.length, byKind, warnings: parts.warnings },
    scoring: {
      graceMs: scoreOptions.graceMs!,
      floodWindowMs: FLOOD_WINDOW_MS,
      floodLimit: FLOOD_LIMIT,
      excludedFromRecall: [...scoreOptions.excludeFromRecall!],
    },
    budgetPerHour: parts.budget,
    gridSpec: formatGridSpec(parts.spec),
    pointCount: 0,
    skippedPoints: 0,
    baseConfig: configToJson(parts.base),
    points: [],
    recommended: null,
    recallFirstIndex: null,
  };
}

const pct = (x: number | null | undefined): string =>
  x === null || x === undefined ? 'n/a' : `${(x * 100).toFixed(1)}%`;

/** A point's settings in words (clearDelay as a duration). */
export function settingsText(settings: GridPoint): string {
  return Object.entries(settings)
    .map(([k, v]) => `${k}=${k === 'clearDelay' ? formatDuration(v as number) : String(v)}`)
    .join(' ');
}

/** The summary line's recommendation part. */
function recommendationText(r: TuningResult['recommended']): string {
  if (r === null) return 'no recommendation';
  return (
    `recommended #${r.index} (${settingsText(r.settings)}): recall ${pct(r.recall)}, precision ${pct(r.precision)}, ` +
    `${r.alertsPerHour.toFixed(2)} alerts/h, ${r.alertsPerCaught === null ? 'n/a' : r.alertsPerCaught.toFixed(2)} raised per caught incident` +
    `${r.withinBudget ? '' : ' (OVER BUDGET)'}; ${r.reason}`
  );
}

/**
 * The console's small table: the recommended point beside the one the recall-first rule would
 * pick, with the health figures that tell them apart (one row when they are the same point).
 */
export function comparisonTable(t: TuningResult): string[] {
  const rec = t.recommended;
  if (rec === null) return [];
  const rows: [string, PointResult][] = [['recommended', rec]];
  if (t.recallFirstIndex !== null && t.recallFirstIndex !== rec.index)
    rows.push(['recall-first', t.points[t.recallFirstIndex]]);
  else rows[0][0] = 'recommended = recall-first';
  const head = [
    'point',
    '#',
    'recall',
    'precision',
    'alerts/h',
    'worst 10 min',
    'raised/caught',
    'repeats/caught',
    'chattering',
    'fleeting',
  ];
  const body = rows.map(([name, p]) => [
    name,
    String(p.index),
    pct(p.recall),
    pct(p.precision),
    p.alertsPerHour.toFixed(2),
    `${p.worst10min}${p.flood ? ' flood' : ''}`,
    p.alertsPerCaught === null ? 'n/a' : p.alertsPerCaught.toFixed(2),
    p.raisesPerCaught === null ? 'n/a' : p.raisesPerCaught.toFixed(2),
    `${p.chatteringRaises} raises / ${p.chatteringSensors} sensors`,
    String(p.fleeting),
  ]);
  const widths = head.map((h, c) => Math.max(h.length, ...body.map((r) => r[c].length)));
  const line = (cells: string[]) =>
    `streamfence tune: ${cells
      .map((x, c) => x.padEnd(widths[c]))
      .join('  ')
      .trimEnd()}`;
  return [line(head), ...body.map(line)];
}
