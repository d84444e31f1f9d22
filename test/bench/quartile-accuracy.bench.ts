/**
 * Quartile accuracy sweep: bucket sizes from 60 to 10,000 readings, five distributions, the shipped
 * sketch design against the classic t-digest bound it replaced. For every baseline a window forms
 * while streaming (once it holds minSamples = 100 readings), the quartiles are compared with the
 * exact quartiles of exactly the readings in its closed buckets, as a rank error
 * (`rankRangeError`, libs/stats/quantiles.ts; the rank range of the values either side for the two
 * discrete distributions). Also the largest encoded state seen (the engine's own encoder).
 *
 * Designs:
 * - shipped: uniform bins (`compressToBins`): the window's closed buckets keep 1,800 centroids in
 *   all, the filling bucket as many as a closed one, the baseline 300 (libs/engine/sketch-params.ts);
 * - classic: the t-digest bound 4 n delta q (1 - q) at delta 0.05 for the filling bucket, the
 *   closed bucket and the baseline (`compressCentroids`; the engine's design before this one).
 */
import { compressCentroids, FrozenDigest, roundForStorage, type Centroids } from '../../libs/stats/digest.js';
import { rankRangeError } from '../../libs/stats/quantiles.js';
import {
  DISTRIBUTIONS,
  shippedAccuracy,
  type AccuracyRow,
  type Distribution,
} from '../support/quartile-accuracy.js';
import { Rng } from '../unit/stats/random.js';

const MIN_SAMPLES = 100;
const PROBES = [0.25, 0.5, 0.75] as const;

/** The classic design, simulated with the same buffer size and the q(1 - q) bound at delta 0.05. */
export function classicAccuracy(
  perBucket: number,
  buckets: number,
  dist: Distribution,
  seed = 7,
): AccuracyRow {
  const delta = 0.05;
  const buffer = 128;
  const rng = new Rng(seed);
  const closed: { centroids: Centroids; values: number[] }[] = [];
  let worst = 0;
  let sum = 0;
  let count = 0;
  for (let bucket = 0; bucket < buckets + 6; bucket++) {
    const values: number[] = [];
    let centroids: Centroids = { means: new Float64Array(0), counts: new Float64Array(0) };
    let pending: number[] = [];
    const flush = () => {
      const sorted = Float64Array.from(pending).sort();
      centroids = compressCentroids(
        [centroids, { means: sorted, counts: new Float64Array(sorted.length).fill(1) }],
        delta,
      );
      pending = [];
    };
    for (let i = 0; i < perBucket; i++) {
      const value = dist.draw(rng);
      values.push(value);
      pending.push(value);
      if (pending.length === buffer) flush();
    }
    if (pending.length > 0) flush();
    closed.push({ centroids: roundForStorage(compressCentroids([centroids], delta)), values });
    if (closed.length > buckets) closed.shift();
    const n = closed.reduce((acc, b) => acc + b.values.length, 0);
    if (n < MIN_SAMPLES) continue;
    const digest = new FrozenDigest(
      compressCentroids(
        closed.map((b) => b.centroids),
        delta,
      ),
    );
    const sorted = Float64Array.from(closed.flatMap((b) => b.values)).sort();
    for (const p of PROBES) {
      const error = Math.abs(rankRangeError(sorted, digest.quantile(p), p, dist.ties));
      worst = Math.max(worst, error);
      sum += error;
      count++;
    }
  }
  return { worst, mean: count > 0 ? sum / count : 0, baselines: count / PROBES.length };
}

const pct = (x: number) => +(100 * x).toFixed(2);

export async function run(): Promise<Record<string, unknown>> {
  const sizes = [60, 100, 180, 250, 600, 1800, 7200, 10_000];
  const out: Record<string, unknown> = { unit: 'worst quartile rank error, % (mean in brackets)' };
  for (const buckets of [12, 10, 24, 48]) {
    const table: Record<string, Record<string, string>> = {};
    let worstShipped = 0;
    let worstClassic = 0;
    let maxBytes = 0;
    for (const dist of DISTRIBUTIONS) {
      const row: Record<string, string> = {};
      for (const size of sizes) {
        const shipped = shippedAccuracy(size, buckets, dist);
        worstShipped = Math.max(worstShipped, shipped.worst);
        maxBytes = Math.max(maxBytes, shipped.maxStateBytes ?? 0);
        let cell = `${pct(shipped.worst)} (${pct(shipped.mean)})`;
        if (buckets <= 12) {
          const classic = classicAccuracy(size, buckets, dist);
          worstClassic = Math.max(worstClassic, classic.worst);
          cell += ` | classic ${pct(classic.worst)} (${pct(classic.mean)})`;
        }
        row[String(size)] = cell;
      }
      table[dist.name] = row;
    }
    out[`buckets${buckets}`] = {
      worstShippedPct: pct(worstShipped),
      ...(buckets <= 12 ? { worstClassicPct: pct(worstClassic) } : {}),
      maxStateBytes: maxBytes,
      byDistributionAndBucketSize: table,
    };
  }
  return out;
}
