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

export const EMPTY_CENTROIDS: Centroids = { means: new Float64Array(0), counts: new Float64Array(0) };

export function totalCount(c: Centroids): number {
  let t = 0;
  for (let i = 0; i < c.counts.length; i++) t += c.counts[i];
  return t;
}

/** Merge sorted centroid lists into one sorted list (balanced pairwise merges; stable). */
function mergeSorted(parts: readonly Centroids[]): Centroids {
  let level = parts.filter((p) => p.means.length > 0) as Centroids[];
  if (level.length === 0) return EMPTY_CENTROIDS;
  while (level.length > 1) {
    const next: Centroids[] = [];
    for (let i = 0; i < level.length; i += 2)
      next.push(i + 1 < level.length ? mergeTwo(level[i], level[i + 1]) : level[i]);
    level = next;
  }
  return level[0];
}

function mergeTwo(a: Centroids, b: Centroids): Centroids {
  const n = a.means.length + b.means.length;
  const means = new Float64Array(n);
  const counts = new Float64Array(n);
  let i = 0;
  let j = 0;
  for (let k = 0; k < n; k++) {
    // Ties take `a` first, so the result does not depend on anything but the inputs' order.
    if (j >= b.means.length || (i < a.means.length && a.means[i] <= b.means[j])) {
      means[k] = a.means[i];
      counts[k] = a.counts[i++];
    } else {
      means[k] = b.means[j];
      counts[k] = b.counts[j++];
    }
  }
  return { means, counts };
}

/**
 * Deterministic compression of centroid lists, each sorted by mean: merge them, then walk in mean
 * order and combine neighbours while the combined weight stays under the t-digest bound
 * 4 * n * delta * q * (1 - q) (at least 1), so the tails stay fine-grained and the middle coarse.
 */
export function compressCentroids(parts: readonly Centroids[], delta: number): Centroids {
  const all = mergeSorted(parts);
  const len = all.means.length;
  if (len === 0) return EMPTY_CENTROIDS;
  const { means, counts } = all;
  const total = totalCount(all);
  const outMeans = new Float64Array(len);
  const outCounts = new Float64Array(len);
  let out = 0;
  let curMean = means[0];
  let curCount = counts[0];
  let before = 0;
  const scale = 4 * total * delta;
  for (let i = 1; i < len; i++) {
    const merged = curCount + counts[i];
    const q = (before + merged / 2) / total;
    const bound = Math.max(1, Math.floor(scale * q * (1 - q)));
    if (merged <= bound) {
      curMean += ((means[i] - curMean) * counts[i]) / merged;
      curCount = merged;
    } else {
      outMeans[out] = curMean;
      outCounts[out++] = curCount;
      before += curCount;
      curMean = means[i];
      curCount = counts[i];
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
export function roundForStorage(c: Centroids): Centroids {
  const n = c.means.length;
  if (n === 0) return c;
  const means = new Float64Array(n);
  means[0] = c.means[0];
  for (let i = 1; i < n; i++) means[i] = means[i - 1] + Math.max(0, Math.fround(c.means[i] - means[i - 1]));
  return { means, counts: c.counts };
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
    if (this.bufLen === 0) return;
    const vals = this.buf.slice(0, this.bufLen).sort();
    this.bufLen = 0;
    this.c = compressCentroids(
      [this.c, { means: vals, counts: new Float64Array(vals.length).fill(1) }],
      this.delta,
    );
  }

  snapshot(): OpenDigestSnapshot {
    return { means: this.c.means, counts: this.c.counts, buffer: this.buf.slice(0, this.bufLen) };
  }

  static restore(s: OpenDigestSnapshot, delta: number, bufferSize: number): OpenDigest {
    if (s.buffer.length >= bufferSize) throw new RangeError('open digest buffer larger than its capacity');
    const o = new OpenDigest(delta, bufferSize);
    o.c = { means: s.means, counts: s.counts };
    o.buf.set(s.buffer);
    o.bufLen = s.buffer.length;
    return o;
  }
}
