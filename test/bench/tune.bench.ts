/**
 * Tune throughput: a grid of 8 points replayed by 2 worker threads over shared columns, against a
 * single in-process replay of the same data measured in the same run (the raw baseline). Figures:
 * grid points x readings per second, the ratio to the single replay, the time to load the columns
 * (simulator -> typed arrays), and peak RSS (the workers share the process, so it includes them).
 */
import { validateConfig } from '../../libs/config/config.js';
import { PlantSimulator, suggestedConfig } from '../../libs/sim/plant.js';
import { applyPoint } from '../../libs/tuning/apply.js';
import { ColumnBuilder, spanOf } from '../../libs/tuning/columns.js';
import { replayRaised } from '../../libs/tuning/evaluate.js';
import { expandGrid, parseGridSpec } from '../../libs/tuning/grid.js';
import { runGrid } from '../../services/tune/pool.js';

const GRID = 'fenceK=2,3;zLimit=4,5;debounce=1/1,2/3';
const SENSORS = 24;
const DAYS = 2;

const mb = (kb: number) => Math.round(kb / 1024);

export async function run(): Promise<Record<string, unknown>> {
  const rssStart = process.memoryUsage().rss;
  const sim = new PlantSimulator({
    seed: 3,
    start: Date.parse('2026-01-05T00:00:00Z'),
    durationMs: DAYS * 86_400_000,
    intervalMs: 60_000,
    sensors: SENSORS,
  });
  const labels = sim.labels().map((l) => ({ ...l, kind: l.kind as string }));
  let t = performance.now();
  const b = new ColumnBuilder();
  for (let r = sim.next(); r !== null; r = sim.next()) b.add(r.sensor, r.ts, r.value);
  const cols = b.finish();
  const loadSeconds = (performance.now() - t) / 1000;

  const base = validateConfig(suggestedConfig('harbour-brewery'));
  const points = expandGrid(parseGridSpec(GRID), base.defaults);

  // Raw baseline: one replay of the same readings in this thread (what tune does per point).
  t = performance.now();
  replayRaised(applyPoint(base, points[0]), cols);
  const singleSeconds = (performance.now() - t) / 1000;
  const singleRate = cols.count / singleSeconds;

  const { first, last } = spanOf(cols);
  t = performance.now();
  await runGrid(cols, base, points, labels, { dataStart: first, dataEnd: last }, { workers: 2 });
  const gridSeconds = (performance.now() - t) / 1000;
  const gridRate = (points.length * cols.count) / gridSeconds;

  return {
    readings: cols.count,
    sensors: SENSORS,
    gridPoints: points.length,
    workers: 2,
    loadColumnsSeconds: Number(loadSeconds.toFixed(3)),
    singleReplayReadingsPerSecond: Math.round(singleRate),
    tunePointReadingsPerSecond: Math.round(gridRate),
    ratioToSingleReplay: Number((gridRate / singleRate).toFixed(2)),
    tuneSeconds: Number(gridSeconds.toFixed(2)),
    peakRssMB: mb(process.resourceUsage().maxRSS),
    rssAtStartMB: Math.round(rssStart / 1048576),
    note: 'includes worker start-up; the ratio is bounded by the free cores (2 workers, 2 cores shared)',
  };
}
