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
 *   all, the filling bucket twice its share, the baseline 300 (libs/engine/sketch-params.ts);
 * - classic: the t-digest bound 4 n delta q (1 - q) at delta 0.05 for the filling bucket, the
 *   closed bucket and the baseline (`compressCentroids`; the engine's design before this one).
 */
import { validateConfig } from '../../libs/config/config.js';
import { Engine } from '../../libs/engine/engine.js';
import { SensorWindow } from '../../libs/engine/window.js';
import { compressCentroids, FrozenDigest, roundForStorage, type Centroids } from '../../libs/stats/digest.js';
import { rankRangeError } from '../../libs/stats/quantiles.js';
import { Rng } from '../unit/stats/random.js';

const MIN_SAMPLES = 100;
const T0 = Date.UTC(2026, 0, 5);
const PROBES = [0.25, 0.5, 0.75] as const;

/** A named distribution; `ties` marks discrete data (many equal values). */
export interface Distribution {
  name: string;
  ties: boolean;
  draw: (rng: Rng) => number;
}

export const DISTRIBUTIONS: Distribution[] = [
  { name: 'normal', ties: false, draw: (rng) => 50 + 5 * rng.normal() },
  { name: 'lognormal', ties: false, draw: (rng) => rng.lognormal(1) },
  { name: 'student-t2', ties: false, draw: (rng) => rng.studentT(2) },
  { name: 'poisson-3', ties: true, draw: (rng) => rng.poisson(3) },
  { name: 'normal-0.1-steps', ties: true, draw: (rng) => Math.round((20 + 2 * rng.normal()) * 10) / 10 },
];

export interface AccuracyRow {
  worst: number;
  mean: number;
  baselines: number;
  maxStateBytes?: number;
}

/** Exact readings of the closed buckets a window's baseline covers, sorted. */
function exactBaseline(indices: number[], byBucket: Map<number, number[]>): Float64Array {
  const all: number[] = [];
  for (const index of indices) for (const value of byBucket.get(index) ?? []) all.push(value);
  return Float64Array.from(all).sort();
}

/** The shipped design, through the engine's own SensorWindow (and Engine for the state size). */
export function shippedAccuracy(
  perBucket: number,
  buckets: number,
  dist: Distribution,
  seed = 7,
): AccuracyRow {
  const bucketMs = perBucket * 1000;
  const window = new SensorWindow(bucketMs * buckets, buckets);
  const engine = new Engine(validateConfig({ defaults: { window: bucketMs * buckets, buckets } }));
  const rng = new Rng(seed);
  const byBucket = new Map<number, number[]>();
  let last: unknown = null;
  let worst = 0;
  let sum = 0;
  let count = 0;
  let maxStateBytes = 0;
  const total = perBucket * (buckets + 6);
  for (let i = 0; i < total; i++) {
    const ts = T0 + i * 1000;
    const value = dist.draw(rng);
    window.advance(ts);
    const baseline = window.baseline();
    if (baseline !== null && baseline !== last) {
      last = baseline;
      maxStateBytes = Math.max(maxStateBytes, engine.encode('probe')?.length ?? 0);
      if (baseline.count >= MIN_SAMPLES) {
        const sorted = exactBaseline(
          window.closed.map((bucket) => bucket.index),
          byBucket,
        );
        const estimates = [baseline.q1, baseline.median, baseline.q3];
        PROBES.forEach((p, k) => {
          const error = rankRangeError(sorted, estimates[k], p, dist.ties);
          worst = Math.max(worst, error);
          sum += error;
          count++;
        });
      }
    }
    window.add(ts, value);
    engine.process({ sensor: 'probe', ts, value });
    const index = Math.floor(ts / bucketMs);
    let list = byBucket.get(index);
    if (!list) byBucket.set(index, (list = []));
    list.push(value);
  }
  return { worst, mean: count > 0 ? sum / count : 0, baselines: count / PROBES.length, maxStateBytes };
}

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
      const error = rankRangeError(sorted, digest.quantile(p), p, dist.ties);
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
