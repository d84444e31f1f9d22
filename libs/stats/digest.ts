/**
 * Quantile sketches for the rolling baseline.
 *
 * - The open (filling) bucket of each sensor is a `tdigest` TDigest fed one reading at a time.
 *   Its automatic compression is turned off (K = 0) because the package compresses in a random
 *   order (Math.random), which would make replays and restarts disagree; we compress in a fixed
 *   order instead (see `compressCentroids`).
 * - Closed buckets and the merged baseline are frozen centroid lists (sorted means and counts):
 *   a union of digests' centroids is itself a valid digest (Dunning and Ertl 2019), and a frozen
 *   list is a few typed arrays instead of a tree of objects, which keeps heap per sensor small.
 * Queries interpolate between centroid mid-points exactly as the `tdigest` package does.
 */
import tdigest from 'tdigest';

const { TDigest } = tdigest;

/** The shape of the package's internals that exact snapshots need (not in its typings). */
interface RawCentroid {
  mean: number;
  n: number;
  cumn: number;
  mean_cumn: number;
}
interface RawDigest {
  n: number;
  last_cumulate: number;
  centroids: { insert(c: RawCentroid): boolean; each(f: (c: RawCentroid) => void): void; size: number };
  push(x: number, n?: number): void;
  push_centroid(c: { mean: number; n: number } | { mean: number; n: number }[]): void;
  reset(): void;
  size(): number;
  toArray(): { mean: number; n: number }[];
  _cumulate(exact: boolean): void;
}

/** Sorted centroid list. `counts` are integers carried as doubles. */
export interface Centroids {
  means: Float64Array;
  counts: Float64Array;
}

export const EMPTY_CENTROIDS: Centroids = { means: new Float64Array(0), counts: new Float64Array(0) };

export function totalCount(c: Centroids): number {
  let t = 0;
  for (let i = 0; i < c.counts.length; i++) t += c.counts[i];
  return t;
}

/**
 * Deterministic one-pass compression: walk the centroids in mean order and merge neighbours
 * while the merged weight stays under the t-digest bound 4 * n * delta * q * (1 - q) (at least 1),
 * so the tails stay fine-grained and the middle coarse. Same input, same output, always.
 */
export function compressCentroids(parts: readonly Centroids[], delta: number): Centroids {
  let len = 0;
  for (const p of parts) len += p.means.length;
  if (len === 0) return EMPTY_CENTROIDS;
  const order = new Uint32Array(len);
  const means = new Float64Array(len);
  const counts = new Float64Array(len);
  let k = 0;
  let total = 0;
  for (const p of parts) {
    for (let i = 0; i < p.means.length; i++) {
      means[k] = p.means[i];
      counts[k] = p.counts[i];
      order[k] = k;
      total += p.counts[i];
      k++;
    }
  }
  // Stable sort by mean (ties keep input order) so the result does not depend on engine internals.
  order.sort((a, b) => means[a] - means[b] || a - b);
  const outMeans: number[] = [];
  const outCounts: number[] = [];
  let curMean = means[order[0]];
  let curCount = counts[order[0]];
  let before = 0;
  for (let j = 1; j < len; j++) {
    const i = order[j];
    const merged = curCount + counts[i];
    const q = (before + merged / 2) / total;
    const bound = Math.max(1, Math.floor(4 * total * delta * q * (1 - q)));
    if (merged <= bound) {
      curMean += ((means[i] - curMean) * counts[i]) / merged;
      curCount = merged;
    } else {
      outMeans.push(curMean);
      outCounts.push(curCount);
      before += curCount;
      curMean = means[i];
      curCount = counts[i];
    }
  }
  outMeans.push(curMean);
  outCounts.push(curCount);
  return { means: Float64Array.from(outMeans), counts: Float64Array.from(outCounts) };
}

/** A frozen digest answering quantile and rank queries; built once per bucket roll. */
export class FrozenDigest {
  readonly means: Float64Array;
  readonly counts: Float64Array;
  /** Cumulative weight at each centroid's mid-point (the package's `mean_cumn`). */
  private readonly mid: Float64Array;
  readonly total: number;

  constructor(c: Centroids) {
    this.means = c.means;
    this.counts = c.counts;
    this.mid = new Float64Array(c.means.length);
    let cum = 0;
    for (let i = 0; i < c.means.length; i++) {
      this.mid[i] = cum + c.counts[i] / 2;
      cum += c.counts[i];
    }
    this.total = cum;
  }

  get size(): number {
    return this.means.length;
  }

  /** Value at quantile p in [0, 1]; NaN when empty. */
  quantile(p: number): number {
    const m = this.means;
    const len = m.length;
    if (len === 0) return NaN;
    const h = this.total * p;
    const mid = this.mid;
    if (h <= mid[0]) return m[0];
    if (h >= mid[len - 1]) return m[len - 1];
    // Largest i with mid[i] <= h.
    let lo = 0;
    let hi = len - 1;
    while (lo < hi) {
      const j = (lo + hi + 1) >>> 1;
      if (mid[j] <= h) lo = j;
      else hi = j - 1;
    }
    if (mid[lo] === h || lo === len - 1) return m[lo];
    return m[lo] + ((h - mid[lo]) * (m[lo + 1] - m[lo])) / (mid[lo + 1] - mid[lo]);
  }

  /** Share of the baseline below x, in [0, 1]; NaN when empty. */
  rank(x: number): number {
    const m = this.means;
    const len = m.length;
    if (len === 0) return NaN;
    if (x < m[0]) return 0;
    if (x > m[len - 1]) return 1;
    let lo = 0;
    let hi = len - 1;
    while (lo < hi) {
      const j = (lo + hi + 1) >>> 1;
      if (m[j] <= x) lo = j;
      else hi = j - 1;
    }
    const mid = this.mid;
    if (m[lo] === x || lo === len - 1) return mid[lo] / this.total;
    return (mid[lo] + ((x - m[lo]) * (mid[lo + 1] - mid[lo])) / (m[lo + 1] - m[lo])) / this.total;
  }
}

/** Exact internal picture of an open digest, enough to resume it bit for bit. */
export interface OpenDigestSnapshot {
  n: number;
  lastCumulate: number;
  mean: Float64Array;
  count: Float64Array;
  cumn: Float64Array;
  meanCumn: Float64Array;
}

/**
 * The filling bucket's digest. Wraps a `tdigest` TDigest with automatic compression off and a
 * size cap enforced by our deterministic compression.
 */
export class OpenDigest {
  private d: RawDigest;
  constructor(
    readonly delta: number,
    readonly cap: number,
  ) {
    this.d = new TDigest(delta, 0) as unknown as RawDigest;
  }

  push(x: number): void {
    this.d.push(x);
    if (this.d.centroids.size > this.cap) this.recompress();
  }

  get size(): number {
    return this.d.centroids.size;
  }

  centroids(): Centroids {
    const size = this.d.centroids.size;
    const means = new Float64Array(size);
    const counts = new Float64Array(size);
    let i = 0;
    this.d.centroids.each((c) => {
      means[i] = c.mean;
      counts[i] = c.n;
      i++;
    });
    return { means, counts };
  }

  private recompress(): void {
    const c = compressCentroids([this.centroids()], this.delta);
    this.d.reset();
    for (let i = 0; i < c.means.length; i++) this.d.centroids.insert(newRaw(c.means[i], c.counts[i]));
    this.d.n = totalCount(c);
    this.d._cumulate(true);
  }

  snapshot(): OpenDigestSnapshot {
    const size = this.d.centroids.size;
    const s: OpenDigestSnapshot = {
      n: this.d.n,
      lastCumulate: this.d.last_cumulate,
      mean: new Float64Array(size),
      count: new Float64Array(size),
      cumn: new Float64Array(size),
      meanCumn: new Float64Array(size),
    };
    let i = 0;
    this.d.centroids.each((c) => {
      s.mean[i] = c.mean;
      s.count[i] = c.n;
      s.cumn[i] = c.cumn;
      // A centroid created since the last cumulation has no mid-point yet; the package treats
      // `undefined` and NaN alike (both poison arithmetic the same way), so NaN stands for it.
      s.meanCumn[i] = c.mean_cumn === undefined ? NaN : c.mean_cumn;
      i++;
    });
    return s;
  }

  static restore(s: OpenDigestSnapshot, delta: number, cap: number): OpenDigest {
    const o = new OpenDigest(delta, cap);
    for (let i = 0; i < s.mean.length; i++) {
      o.d.centroids.insert({ mean: s.mean[i], n: s.count[i], cumn: s.cumn[i], mean_cumn: s.meanCumn[i] });
    }
    o.d.n = s.n;
    o.d.last_cumulate = s.lastCumulate;
    return o;
  }
}

function newRaw(mean: number, n: number): RawCentroid {
  return { mean, n, cumn: 0, mean_cumn: 0 };
}
