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
import { spanOf } from '../../libs/tuning/columns.js';
import { DEFAULT_GRID_SPEC, expandGrid, formatGridSpec, parseGridSpec } from '../../libs/tuning/grid.js';
import { recommend } from '../../libs/tuning/recommend.js';
import { Progress, formatCount, formatSeconds, type ProgressSink } from '../progress.js';
import { loadEngineConfig } from '../setup/config-file.js';
import { loadColumns } from './load.js';
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
  return `tune: every point keeps the config's profile setting (${own}${rules}); the grid does not vary profile, timeZone or profileDays: tune once per setting to compare them`;
}

export async function runTune(o: TuneOptions): Promise<TuneOutcome> {
  const stream = o.stream ?? process.stderr;
  const budget = o.budget ?? ALERT_BUDGET_PER_HOUR;
  const workers = o.workers ?? availableParallelism();
  const base: EngineConfig = loadEngineConfig(o.config);
  const spec = parseGridSpec(o.grid ?? DEFAULT_GRID_SPEC);
  const points = expandGrid(spec, base.defaults);
  // Fail on a point the config would refuse before spending time on the input.
  points.forEach((p) => applyPoint(base, p));
  const incidents: Incident[] = parseLabelsCsv(await readText(o.labels, 'labels'), o.labels);
  checkInputFile(o.input);
  // The output folder is made now, so a path that cannot take it fails before the grid runs.
  await prepareOutDir(o.out);
  o.onStart?.();
  stream.write(`${profileNote(base)}\n`);

  const started = performance.now();
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
  const scoreOptions: ScoreOptions = {
    graceMs: o.graceMs ?? DEFAULT_GRACE_MS,
    dataStart: first,
    dataEnd: last,
    excludeFromRecall: excludedFromRecall(base),
  };

  // Live line: readings replayed over all points so far, their rate, and the ETA from points done.
  const gridProgress = new Progress({ unit: 'readings', total: points.length, stream });
  const scores = await runGrid(cols, base, points, incidents, scoreOptions, {
    workers,
    onPoint: (done) => gridProgress.update(done * cols.count, done),
  });

  const results: PointResult[] = scores.map((s, index) => ({
    index,
    settings: points[index],
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
  }));
  const rec = recommend(results, budget);
  const warnings = labelWarnings(incidents, new Set(cols.names), first, last);
  for (const w of warnings) stream.write(`tune: warning: ${w}\n`);
  const byKind: Record<string, number> = {};
  for (const i of incidents) byKind[i.kind || NO_KIND] = (byKind[i.kind || NO_KIND] ?? 0) + 1;
  const result: TuningResult = {
    formatVersion: TUNING_FORMAT_VERSION,
    engineVersion: ENGINE_VERSION,
    notice: NOTICE,
    input: {
      path: o.input,
      format: loaded.format,
      readings: cols.count,
      rejected: loaded.rejected,
      sensors: cols.names.length,
      firstTs: new Date(first).toISOString(),
      lastTs: new Date(last).toISOString(),
      hours: (last - first) / 3_600_000,
    },
    labels: { path: o.labels, incidents: incidents.length, byKind, warnings },
    scoring: {
      graceMs: scoreOptions.graceMs!,
      floodWindowMs: FLOOD_WINDOW_MS,
      floodLimit: FLOOD_LIMIT,
      excludedFromRecall: [...scoreOptions.excludeFromRecall!],
    },
    budgetPerHour: budget,
    gridSpec: formatGridSpec(spec),
    pointCount: points.length,
    baseConfig: configToJson(base),
    points: results,
    recommended:
      rec === null ? null : { ...results[rec.index], reason: rec.reason, withinBudget: rec.withinBudget },
  };
  const recommendedConfig = rec === null ? null : configToJson(applyPoint(base, points[rec.index]));
  const { files, report } = await writeOutputs(o.out, result, recommendedConfig);

  const seconds = (performance.now() - started) / 1000;
  const r = result.recommended;
  const pct = (x: number | null | undefined) =>
    x === null || x === undefined ? 'n/a' : `${(x * 100).toFixed(1)}%`;
  const summary =
    `tune: ${points.length} points x ${formatCount(cols.count)} readings in ${formatSeconds(seconds)} ` +
    `(${formatCount((points.length * cols.count) / Math.max(seconds, 1e-9))} readings/s, ${workers} workers); ` +
    (r
      ? `recommended #${r.index} (${Object.entries(r.settings)
          .map(([k, v]) => `${k}=${Array.isArray(v) ? v.join('/') : String(v)}`)
          .join(' ')}): recall ${pct(r.recall)}, precision ${pct(r.precision)}, ` +
        `${r.alertsPerHour.toFixed(2)} alerts/h${r.withinBudget ? '' : ' (OVER BUDGET)'}; ${r.reason}`
      : 'no recommendation') +
    `; wrote ${o.out}`;
  gridProgress.finish(summary);
  return { result, files, report, summary, seconds };
}
