/**
 * Quantile sketches for the rolling baseline: t-digests (Dunning and Ertl 2019) in the "merging"
 * form, with a uniform scale function (k0: every centroid covers at most an equal share of the
 * ranks), because the fences hang on Q1 and Q3, where the usual tail-heavy scale functions are
 * coarsest. `compressToBins` is the engine's compression; `compressCentroids` (the classic
 * q(1 - q) bound) is kept as the reference design the accuracy tests and the bench compare with.
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
 * Deterministic compression to at most `bins` centroids of equal rank share (a uniform scale
 * function): walk the lists in mean order (k-way merge, ties to the earlier list) and give each
 * centroid the bin floor(bins * midRank / total) of its own mid-rank; neighbours in one bin merge.
 * Unlike a weight bound, this uses the whole allowance even when the input is unit weights, so a
 * bucket holding fewer readings than `bins` stays exact and a bigger one keeps `bins` centroids.
 */
export function compressToBins(parts: readonly Centroids[], bins: number): Centroids {
  const partCount = parts.length;
  let len = 0;
  let total = 0;
  for (let p = 0; p < partCount; p++) {
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
  const positions = new Int32Array(partCount);
  const lastBin = bins - 1;
  let out = 0;
  let currentMean = 0;
  let currentCount = 0;
  let currentBin = -1;
  let cumulative = 0;
  for (let taken = 0; taken < len; taken++) {
    let best = -1;
    let bestMean = Infinity;
    for (let p = 0; p < partCount; p++) {
      const index = positions[p];
      const means = parts[p].means;
      if (index < means.length && (best < 0 || means[index] < bestMean)) {
        best = p;
        bestMean = means[index];
      }
    }
    const count = parts[best].counts[positions[best]++];
    const bin = Math.min(lastBin, Math.floor((bins * (cumulative + count / 2)) / total));
    cumulative += count;
    if (bin === currentBin) {
      const merged = currentCount + count;
      currentMean += ((bestMean - currentMean) * count) / merged;
      currentCount = merged;
      continue;
    }
    if (currentBin >= 0) {
      outMeans[out] = currentMean;
      outCounts[out++] = currentCount;
    }
    currentMean = bestMean;
    currentCount = count;
    currentBin = bin;
  }
  outMeans[out] = currentMean;
  outCounts[out++] = currentCount;
  return { means: outMeans.slice(0, out), counts: outCounts.slice(0, out) };
}

/**
 * A closed bucket's centroids as they are held and stored: the first mean as a double, each next
 * one as the previous plus a single-precision step, and integer counts. Steps are small next to
 * the values, so this keeps about seven significant digits of each gap (far below the sketch's
 * own error) at 8 bytes per centroid in memory (16 unpacked) and about 5.5 in the state, and the
 * in-memory bucket and its encoding are the same numbers.
 */
export interface PackedCentroids {
  first: number;
  /** steps[0] is unused (0); means[i] = means[i - 1] + steps[i]. */
  steps: Float32Array;
  counts: Uint32Array;
}

/** Pack a sorted centroid list (rounding each gap to single precision, never below 0). */
export function packCentroids(centroids: Centroids): PackedCentroids {
  const length = centroids.means.length;
  // One backing store for both views: small typed arrays cost a few hundred bytes each beyond
  // their data, which at 12 buckets a sensor was a third of a closed window's memory.
  const store = new ArrayBuffer(length * 8);
  const steps = new Float32Array(store, 0, length);
  const counts = new Uint32Array(store, length * 4, length);
  for (let i = 0; i < length; i++) counts[i] = centroids.counts[i];
  let previous = length > 0 ? centroids.means[0] : 0;
  for (let i = 1; i < length; i++) {
    steps[i] = Math.max(0, Math.fround(centroids.means[i] - previous));
    previous += steps[i];
  }
  return { first: length > 0 ? centroids.means[0] : 0, steps, counts };
}

/** The centroid list a packed one stands for (the same additions in the same order as packing). */
export function unpackCentroids(packed: PackedCentroids): Centroids {
  const length = packed.steps.length;
  const means = new Float64Array(length);
  if (length > 0) means[0] = packed.first;
  for (let i = 1; i < length; i++) means[i] = means[i - 1] + packed.steps[i];
  return { means, counts: Float64Array.from(packed.counts) };
}

/** A centroid list rounded the way packing stores it. */
export function roundForStorage(centroids: Centroids): Centroids {
  return unpackCentroids(packCentroids(centroids));
}

/** A frozen digest answering quantile and rank queries; built once per bucket roll. */
export class FrozenDigest {
  /** Centroid means, ascending. */
  readonly means: Float64Array;
  /** Cumulative weight at each centroid's mid-point (the package's `mean_cumn`). */
  private readonly mid: Float64Array;
  /** Total weight (readings) of the digest. */
  readonly total: number;

  constructor(centroids: Centroids) {
    // Counts are not kept: the mid-point ranks are all that queries need.
    this.means = centroids.means;
    this.mid = new Float64Array(centroids.means.length);
    let cum = 0;
    for (let i = 0; i < centroids.means.length; i++) {
      this.mid[i] = cum + centroids.counts[i] / 2;
      cum += centroids.counts[i];
    }
    this.total = cum;
  }

  /** Number of centroids. */
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
 * The filling bucket's digest: a buffer of up to `bufferSize` raw readings merged into at most
 * `bins` sorted centroids (compressToBins) whenever it fills. The state is only ever changed by `push` and by reading the
 * centroids at bucket close, never by encoding it, so a checkpointed run and an uninterrupted
 * run stay identical.
 */
export class OpenDigest {
  private c: Centroids = EMPTY_CENTROIDS;
  private readonly buf: Float64Array;
  private bufLen = 0;

  constructor(
    readonly bins: number,
    readonly bufferSize: number,
  ) {
    this.buf = new Float64Array(bufferSize);
  }

  /** Adds a value; the buffer is merged into the centroids when full. */
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
    this.c = compressToBins([this.c, { means: vals, counts: ones.subarray(0, n) }], this.bins);
  }

  /** Empty the digest for the next bucket, keeping its buffer. */
  reset(): void {
    this.c = EMPTY_CENTROIDS;
    this.bufLen = 0;
  }

  /** Centroids and buffered values, for encoding. */
  snapshot(): OpenDigestSnapshot {
    return { means: this.c.means, counts: this.c.counts, buffer: this.buf.slice(0, this.bufLen) };
  }

  /** A digest from its snapshot (throws RangeError when the buffer exceeds its capacity). */
  static restore(s: OpenDigestSnapshot, bins: number, bufferSize: number): OpenDigest {
    if (s.buffer.length >= bufferSize) throw new RangeError('open digest buffer larger than its capacity');
    const o = new OpenDigest(bins, bufferSize);
    o.c = { means: s.means, counts: s.counts };
    o.buf.set(s.buffer);
    o.bufLen = s.buffer.length;
    return o;
  }
}
