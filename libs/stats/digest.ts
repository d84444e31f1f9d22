/**
 * Quantile sketches for the rolling baseline: t-digests (Dunning and Ertl 2019) in the "merging"
 * form.
 *
 * - The open (filling) bucket appends readings to a small buffer; when the buffer is full it is
 *   sorted and merged into the bucket's centroids under the t-digest size bound. This is far
 *   cheaper per reading than inserting into a tree, and it is deterministic.
 * - Closed buckets and the merged baseline are frozen centroid lists (sorted means and counts): a
 *   union of digests' centroids is itself a valid digest, and a frozen list is a few typed arrays
 *   instead of a tree of objects, which keeps heap per sensor small.
 * Queries interpolate between centroid mid-points the way the npm `tdigest` package does; the
 * tests and benchmarks use that package as the reference.
 */

/** Sorted centroid list. `counts` are integers carried as doubles. */
export interface Centroids {
  means: Float64Array;
  counts: Float64Array;
}

/** No centroids (shared, never written to). */
export const EMPTY_CENTROIDS: Centroids = { means: new Float64Array(0), counts: new Float64Array(0) };

/** The number of values the centroids stand for. */
export function totalCount(centroids: Centroids): number {
  let total = 0;
  for (let i = 0; i < centroids.counts.length; i++) total += centroids.counts[i];
  return total;
}

// Scratch space for compression output, grown on demand and reused: compression runs at every
// buffer flush and bucket roll, and fresh arrays each time made the garbage collector a top cost.
let scratchMeans = new Float64Array(1024);
let scratchCounts = new Float64Array(1024);

/**
 * Deterministic compression of centroid lists, each sorted by mean: walk all of them in mean
 * order (a k-way merge; ties go to the earlier list, so the result depends only on the inputs)
 * and combine neighbours while the combined weight stays under the t-digest bound
 * 4 * n * delta * q * (1 - q) (at least 1), so the tails stay fine-grained and the middle coarse.
 */
export function compressCentroids(parts: readonly Centroids[], delta: number): Centroids {
  const k = parts.length;
  let len = 0;
  let total = 0;
  for (let p = 0; p < k; p++) {
    len += parts[p].means.length;
    total += totalCount(parts[p]);
  }
  if (len === 0) return EMPTY_CENTROIDS;
  if (scratchMeans.length < len) {
    scratchMeans = new Float64Array(len * 2);
    scratchCounts = new Float64Array(len * 2);
  }
  const outMeans = scratchMeans;
  const outCounts = scratchCounts;
  const pos = new Int32Array(k);
  const scale = 4 * total * delta;
  let out = 0;
  let curMean = 0;
  let curCount = 0;
  let before = 0;
  for (let taken = 0; taken < len; taken++) {
    // The part whose next centroid has the smallest mean (k is at most a few dozen).
    let best = -1;
    let bestMean = Infinity;
    for (let p = 0; p < k; p++) {
      const i = pos[p];
      const means = parts[p].means;
      if (i < means.length && (best < 0 || means[i] < bestMean)) {
        best = p;
        bestMean = means[i];
      }
    }
    const count = parts[best].counts[pos[best]++];
    if (taken === 0) {
      curMean = bestMean;
      curCount = count;
      continue;
    }
    const merged = curCount + count;
    const quantile = (before + merged / 2) / total;
    const bound = Math.max(1, Math.floor(scale * quantile * (1 - quantile)));
    if (merged <= bound) {
      curMean += ((bestMean - curMean) * count) / merged;
      curCount = merged;
    } else {
      outMeans[out] = curMean;
      outCounts[out++] = curCount;
      before += curCount;
      curMean = bestMean;
      curCount = count;
    }
  }
  outMeans[out] = curMean;
  outCounts[out++] = curCount;
  return { means: outMeans.slice(0, out), counts: outCounts.slice(0, out) };
}

/**
 * Rounds a sorted centroid list to what the compact state encoding stores exactly: the first
 * mean as a double, each next one as the previous plus a single-precision step. Steps are small
 * next to the values, so this keeps about seven significant digits of each gap (far below the
 * sketch's own error) and halves the bytes per centroid. Applied when a bucket closes, so the
 * in-memory bucket and its encoding are always identical.
 */
export function roundForStorage(centroids: Centroids): Centroids {
  const n = centroids.means.length;
  if (n === 0) return centroids;
  const means = new Float64Array(n);
  means[0] = centroids.means[0];
  for (let i = 1; i < n; i++)
    means[i] = means[i - 1] + Math.max(0, Math.fround(centroids.means[i] - means[i - 1]));
  return { means, counts: centroids.counts };
}

/** A frozen digest answering quantile and rank queries; built once per bucket roll. */
export class FrozenDigest {
  readonly means: Float64Array;
  readonly counts: Float64Array;
  /** Cumulative weight at each centroid's mid-point (the package's `mean_cumn`). */
  private readonly mid: Float64Array;
  readonly total: number;

  constructor(centroids: Centroids) {
    this.means = centroids.means;
    this.counts = centroids.counts;
    this.mid = new Float64Array(centroids.means.length);
    let cum = 0;
    for (let i = 0; i < centroids.means.length; i++) {
      this.mid[i] = cum + centroids.counts[i] / 2;
      cum += centroids.counts[i];
    }
    this.total = cum;
  }

  get size(): number {
    return this.means.length;
  }

  /** Value at quantile p in [0, 1]; NaN when empty. */
  quantile(p: number): number {
    const means = this.means;
    const len = means.length;
    if (len === 0) return NaN;
    const target = this.total * p;
    const mid = this.mid;
    if (target <= mid[0]) return means[0];
    if (target >= mid[len - 1]) return means[len - 1];
    // Largest i with mid[i] <= target.
    let lo = 0;
    let hi = len - 1;
    while (lo < hi) {
      const j = (lo + hi + 1) >>> 1;
      if (mid[j] <= target) lo = j;
      else hi = j - 1;
    }
    if (mid[lo] === target || lo === len - 1) return means[lo];
    return means[lo] + ((target - mid[lo]) * (means[lo + 1] - means[lo])) / (mid[lo + 1] - mid[lo]);
  }

  /** Share of the baseline below x, in [0, 1]; NaN when empty. */
  rank(x: number): number {
    const means = this.means;
    const len = means.length;
    if (len === 0) return NaN;
    if (x < means[0]) return 0;
    if (x > means[len - 1]) return 1;
    let lo = 0;
    let hi = len - 1;
    while (lo < hi) {
      const j = (lo + hi + 1) >>> 1;
      if (means[j] <= x) lo = j;
      else hi = j - 1;
    }
    const mid = this.mid;
    if (means[lo] === x || lo === len - 1) return mid[lo] / this.total;
    return (mid[lo] + ((x - means[lo]) * (mid[lo + 1] - mid[lo])) / (means[lo + 1] - means[lo])) / this.total;
  }
}

// Unit weights for buffered readings, shared by every open digest (read-only).
let ones = new Float64Array(256).fill(1);

/** Exact picture of an open digest, enough to resume it bit for bit. */
export interface OpenDigestSnapshot {
  means: Float64Array;
  counts: Float64Array;
  /** Readings not yet merged, in arrival order. */
  buffer: Float64Array;
}

/**
 * The filling bucket's digest: a buffer of up to `bufferSize` raw readings merged into sorted
 * centroids whenever it fills. The state is only ever changed by `push` and by reading the
 * centroids at bucket close, never by encoding it, so a checkpointed run and an uninterrupted
 * run stay identical.
 */
export class OpenDigest {
  private c: Centroids = EMPTY_CENTROIDS;
  private readonly buf: Float64Array;
  private bufLen = 0;

  constructor(
    readonly delta: number,
    readonly bufferSize: number,
  ) {
    this.buf = new Float64Array(bufferSize);
  }

  push(x: number): void {
    this.buf[this.bufLen++] = x;
    if (this.bufLen === this.buf.length) this.flush();
  }

  /** Centroids plus buffered readings. */
  get size(): number {
    return this.c.means.length + this.bufLen;
  }

  /** All readings so far as one sorted, compressed centroid list (merges the buffer first). */
  centroids(): Centroids {
    this.flush();
    return this.c;
  }

  private flush(): void {
    const n = this.bufLen;
    if (n === 0) return;
    const vals = this.buf.subarray(0, n).sort();
    this.bufLen = 0;
    if (ones.length < n) ones = new Float64Array(n).fill(1);
    this.c = compressCentroids([this.c, { means: vals, counts: ones.subarray(0, n) }], this.delta);
  }

  /** Empty the digest for the next bucket, keeping its buffer. */
  reset(): void {
    this.c = EMPTY_CENTROIDS;
    this.bufLen = 0;
  }

  snapshot(): OpenDigestSnapshot {
    return { means: this.c.means, counts: this.c.counts, buffer: this.buf.slice(0, this.bufLen) };
  }

  static restore(snapshot: OpenDigestSnapshot, delta: number, bufferSize: number): OpenDigest {
    if (snapshot.buffer.length >= bufferSize)
      throw new RangeError('open digest buffer larger than its capacity');
    const digest = new OpenDigest(delta, bufferSize);
    digest.c = { means: snapshot.means, counts: snapshot.counts };
    digest.buf.set(snapshot.buffer);
    digest.bufLen = snapshot.buffer.length;
    return digest;
  }
}
