/**
 * The quartile accuracy measure shared by the unit test that asserts the published bound
 * (test/unit/stats/quartile-accuracy.test.ts) and the design sweep (test/bench/quartile-accuracy.bench.ts):
 * stream one sensor through the engine's own SensorWindow with `perBucket` readings in each bucket,
 * and for every baseline the window forms (once it holds minSamples = 100 readings) compare its
 * quartiles with the exact quartiles of exactly the readings in its closed buckets, as a rank error
 * (`rankRangeError`, libs/stats/quantiles.ts; the rank range of the values either side for the two
 * discrete distributions). Also reports the largest encoded state seen (the engine's own encoder).
 */
import { validateConfig } from '../../libs/config/config.js';
import { Engine } from '../../libs/engine/engine.js';
import { SensorWindow } from '../../libs/engine/window.js';
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
          const error = Math.abs(rankRangeError(sorted, estimates[k], p, dist.ties));
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
