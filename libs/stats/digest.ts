/**
 * Quantile sketches for the rolling baseline: t-digests (Dunning and Ertl 2019) in the "merging"
 * form, with a uniform scale function (k0: every centroid covers at most an equal share of the
 * ranks), because the fences hang on Q1 and Q3, where the usual tail-heavy scale functions are
 * coarsest. `compressToBins` is the engine's compression; `compressCentroids` (the classic
 * q(1 - q) bound) is kept as the reference design the accuracy tests and the bench compare with.
 *
 * - The open (filling) bucket appends readings to a small buffer; when the buffer is full it is
 *   sorted and merged into the bucket's centroids (`compressToBins`). This is far
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
  for (let index = 0; index < centroids.counts.length; index++) total += centroids.counts[index];
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
  const partCount = parts.length;
  let len = 0;
  let total = 0;
  for (let part = 0; part < partCount; part++) {
    len += parts[part].means.length;
    total += totalCount(parts[part]);
  }
  if (len === 0) return EMPTY_CENTROIDS;
  if (scratchMeans.length < len) {
    scratchMeans = new Float64Array(len * 2);
    scratchCounts = new Float64Array(len * 2);
  }
  const outMeans = scratchMeans;
  const outCounts = scratchCounts;
  const positions = new Int32Array(partCount);
  const scale = 4 * total * delta;
  let out = 0;
  let currentMean = 0;
  let currentCount = 0;
  let before = 0;
  for (let taken = 0; taken < len; taken++) {
    // The part whose next centroid has the smallest mean (partCount is at most a few dozen).
    let best = -1;
    let bestMean = Infinity;
    for (let part = 0; part < partCount; part++) {
      const index = positions[part];
      const means = parts[part].means;
      if (index < means.length && (best < 0 || means[index] < bestMean)) {
        best = part;
        bestMean = means[index];
      }
    }
    const count = parts[best].counts[positions[best]++];
    if (taken === 0) {
      currentMean = bestMean;
      currentCount = count;
      continue;
    }
    const merged = currentCount + count;
    const quantile = (before + merged / 2) / total;
    const bound = Math.max(1, Math.floor(scale * quantile * (1 - quantile)));
    if (merged <= bound) {
      currentMean += ((bestMean - currentMean) * count) / merged;
      currentCount = merged;
    } else {
      outMeans[out] = currentMean;
      outCounts[out++] = currentCount;
      before += currentCount;
      currentMean = bestMean;
      currentCount = count;
    }
  }
  outMeans[out] = currentMean;
  outCounts[out++] = currentCount;
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
  for (let part = 0; part < partCount; part++) {
    len += parts[part].means.length;
    total += totalCount(parts[part]);
  }
  if (len === 0) return EMPTY_CENTROIDS;
  if (partCount === 1) return binsOf(parts[0].means, parts[0].counts, len, total, bins);
  growMergeScratch(len);
  let at = 0;
  for (let part = 0; part < partCount; part++) {
    runStarts[part] = at;
    mergeMeans.set(parts[part].means, at);
    mergeCounts.set(parts[part].counts, at);
    at += parts[part].means.length;
  }
  runStarts[partCount] = at;
  return binsOfRuns(partCount, len, total, bins);
}

/**
 * compressToBins of the centroid lists packed lists stand for (`unpackCentroids` of each), without
 * building them one by one: the baseline rebuild at every bucket roll merges a dozen of them.
 */
export function compressPackedToBins(parts: readonly PackedCentroids[], bins: number): Centroids {
  const partCount = parts.length;
  let len = 0;
  for (let part = 0; part < partCount; part++) len += parts[part].steps.length;
  if (len === 0) return EMPTY_CENTROIDS;
  growMergeScratch(len);
  let at = 0;
  let total = 0;
  for (let part = 0; part < partCount; part++) {
    runStarts[part] = at;
    const { first, steps, counts } = parts[part];
    const length = steps.length;
    let partTotal = 0;
    // The same additions in the same order as unpackCentroids, so the means are the same doubles.
    if (length > 0) mergeMeans[at] = first;
    for (let index = 1; index < length; index++)
      mergeMeans[at + index] = mergeMeans[at + index - 1] + steps[index];
    for (let index = 0; index < length; index++) {
      mergeCounts[at + index] = counts[index];
      partTotal += counts[index];
    }
    total += partTotal;
    at += length;
  }
  runStarts[partCount] = at;
  return binsOfRuns(partCount, len, total, bins);
}

// Merge scratch: the runs side by side (mergeMeans/mergeCounts), the other buffer of the ping-pong
// merge (spareMeans/spareCounts) and where each run starts. Reused like the output scratch.
let mergeMeans = new Float64Array(2048);
let mergeCounts = new Float64Array(2048);
let spareMeans = new Float64Array(2048);
let spareCounts = new Float64Array(2048);
let runStarts = new Int32Array(64);
let nextStarts = new Int32Array(64);

function growMergeScratch(len: number): void {
  if (mergeMeans.length < len) {
    mergeMeans = new Float64Array(len * 2);
    mergeCounts = new Float64Array(len * 2);
    spareMeans = new Float64Array(len * 2);
    spareCounts = new Float64Array(len * 2);
  }
}

function growRunStarts(runs: number): void {
  if (runStarts.length <= runs) {
    const grown = new Int32Array((runs + 1) * 2);
    grown.set(runStarts);
    runStarts = grown;
    nextStarts = new Int32Array((runs + 1) * 2);
  }
}

/** Whether every run in the merge scratch is in ascending order of mean (compression output always is; a NaN is not). */
function runsSorted(runs: number): boolean {
  for (let run = 0; run < runs; run++) {
    for (let index = runStarts[run] + 1; index < runStarts[run + 1]; index++) {
      if (!(mergeMeans[index] >= mergeMeans[index - 1])) return false;
    }
  }
  return true;
}

/**
 * The runs in the merge scratch in k-way merge order (smallest head first, ties to the earlier
 * run), binned. Sorted runs are merged pairwise, neighbours with neighbours, taking the left one
 * on ties: that is a stable merge sort, which gives exactly the k-way order for sorted runs at
 * about log2(runs) comparisons per centroid instead of one per run. Two runs merge the same way
 * whatever their order; more that are not sorted (never produced here) take the k-way walk.
 */
function binsOfRuns(partCount: number, len: number, total: number, bins: number): Centroids {
  if (partCount > 2 && !runsSorted(partCount)) return kWayBins(partCount, len, total, bins);
  growRunStarts(partCount);
  let runs = partCount;
  while (runs > 1) {
    let next = 0;
    for (let run = 0; run < runs; run += 2) {
      nextStarts[next++] = runStarts[run];
      const from = runStarts[run];
      const middle = runStarts[run + 1];
      const to = run + 1 < runs ? runStarts[run + 2] : middle;
      mergeTwo(from, middle, to);
    }
    nextStarts[next] = runStarts[runs];
    const swapStarts = runStarts;
    runStarts = nextStarts;
    nextStarts = swapStarts;
    swapMergeBuffers();
    runs = next;
  }
  return binsOf(mergeMeans, mergeCounts, len, total, bins);
}

/** Merge runs [from, middle) and [middle, to) of the merge scratch into the spare buffer, left first on ties. */
function mergeTwo(from: number, middle: number, to: number): void {
  const means = mergeMeans;
  const counts = mergeCounts;
  const outMeans = spareMeans;
  const outCounts = spareCounts;
  let left = from;
  let right = middle;
  let out = from;
  while (left < middle && right < to) {
    if (means[right] < means[left]) {
      outMeans[out] = means[right];
      outCounts[out++] = counts[right++];
    } else {
      outMeans[out] = means[left];
      outCounts[out++] = counts[left++];
    }
  }
  while (left < middle) {
    outMeans[out] = means[left];
    outCounts[out++] = counts[left++];
  }
  while (right < to) {
    outMeans[out] = means[right];
    outCounts[out++] = counts[right++];
  }
}

function swapMergeBuffers(): void {
  const means = mergeMeans;
  const counts = mergeCounts;
  mergeMeans = spareMeans;
  mergeCounts = spareCounts;
  spareMeans = means;
  spareCounts = counts;
}

/** The k-way walk over the runs in the merge scratch (smallest head, ties to the earlier run), binned. */
function kWayBins(partCount: number, len: number, total: number, bins: number): Centroids {
  const positions = Int32Array.from(runStarts.subarray(0, partCount));
  for (let taken = 0; taken < len; taken++) {
    let best = -1;
    let bestMean = Infinity;
    for (let part = 0; part < partCount; part++) {
      const index = positions[part];
      if (index < runStarts[part + 1] && (best < 0 || mergeMeans[index] < bestMean)) {
        best = part;
        bestMean = mergeMeans[index];
      }
    }
    const index = positions[best]++;
    spareMeans[taken] = bestMean;
    spareCounts[taken] = mergeCounts[index];
  }
  return binsOf(spareMeans, spareCounts, len, total, bins);
}

/** Bin one list in mean order (the first `len` entries of means/counts) into at most `bins` centroids. */
function binsOf(
  means: Float64Array,
  counts: Float64Array,
  len: number,
  total: number,
  bins: number,
): Centroids {
  if (scratchMeans.length < len) {
    scratchMeans = new Float64Array(len * 2);
    scratchCounts = new Float64Array(len * 2);
  }
  const outMeans = scratchMeans;
  const outCounts = scratchCounts;
  const lastBin = bins - 1;
  let out = 0;
  let currentMean = 0;
  let currentCount = 0;
  let currentBin = -1;
  let cumulative = 0;
  for (let taken = 0; taken < len; taken++) {
    const mean = means[taken];
    const count = counts[taken];
    const bin = Math.min(lastBin, Math.floor((bins * (cumulative + count / 2)) / total));
    cumulative += count;
    if (bin === currentBin) {
      const merged = currentCount + count;
      currentMean += ((mean - currentMean) * count) / merged;
      currentCount = merged;
      continue;
    }
    if (currentBin >= 0) {
      outMeans[out] = currentMean;
      outCounts[out++] = currentCount;
    }
    currentMean = mean;
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
  for (let index = 0; index < length; index++) counts[index] = centroids.counts[index];
  let previous = length > 0 ? centroids.means[0] : 0;
  for (let index = 1; index < length; index++) {
    steps[index] = Math.max(0, Math.fround(centroids.means[index] - previous));
    previous += steps[index];
  }
  return { first: length > 0 ? centroids.means[0] : 0, steps, counts };
}

/** The centroid list a packed one stands for (the same additions in the same order as packing). */
export function unpackCentroids(packed: PackedCentroids): Centroids {
  const length = packed.steps.length;
  const means = new Float64Array(length);
  if (length > 0) means[0] = packed.first;
  for (let index = 1; index < length; index++) means[index] = means[index - 1] + packed.steps[index];
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
    let cumulative = 0;
    for (let index = 0; index < centroids.means.length; index++) {
      this.mid[index] = cumulative + centroids.counts[index] / 2;
      cumulative += centroids.counts[index];
    }
    this.total = cumulative;
  }

  /** Number of centroids. */
  get size(): number {
    return this.means.length;
  }

  /** Value at quantile `probability` in [0, 1]; NaN when empty. */
  quantile(probability: number): number {
    const means = this.means;
    const len = means.length;
    if (len === 0) return NaN;
    const target = this.total * probability;
    const mid = this.mid;
    if (target <= mid[0]) return means[0];
    if (target >= mid[len - 1]) return means[len - 1];
    // Largest index with mid[index] <= target.
    let low = 0;
    let high = len - 1;
    while (low < high) {
      const middle = (low + high + 1) >>> 1;
      if (mid[middle] <= target) low = middle;
      else high = middle - 1;
    }
    if (mid[low] === target || low === len - 1) return means[low];
    return means[low] + ((target - mid[low]) * (means[low + 1] - means[low])) / (mid[low + 1] - mid[low]);
  }

  /** Share of the baseline below value, in [0, 1]; NaN when empty. */
  rank(value: number): number {
    const means = this.means;
    const len = means.length;
    if (len === 0) return NaN;
    if (value < means[0]) return 0;
    if (value > means[len - 1]) return 1;
    let low = 0;
    let high = len - 1;
    while (low < high) {
      const middle = (low + high + 1) >>> 1;
      if (means[middle] <= value) low = middle;
      else high = middle - 1;
    }
    const mid = this.mid;
    if (means[low] === value || low === len - 1) return mid[low] / this.total;
    return (
      (mid[low] + ((value - means[low]) * (mid[low + 1] - mid[low])) / (means[low + 1] - means[low])) /
      this.total
    );
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
  private current: Centroids = EMPTY_CENTROIDS;
  private readonly buffer: Float64Array;
  private bufferedCount = 0;

  constructor(
    readonly bins: number,
    readonly bufferSize: number,
  ) {
    this.buffer = new Float64Array(bufferSize);
  }

  /** Adds a value; the buffer is merged into the centroids when full. */
  push(value: number): void {
    this.buffer[this.bufferedCount++] = value;
    if (this.bufferedCount === this.buffer.length) this.flush();
  }

  /** Centroids plus buffered readings. */
  get size(): number {
    return this.current.means.length + this.bufferedCount;
  }

  /** All readings so far as one sorted, compressed centroid list (merges the buffer first). */
  centroids(): Centroids {
    this.flush();
    return this.current;
  }

  private flush(): void {
    const buffered = this.bufferedCount;
    if (buffered === 0) return;
    const sorted = this.buffer.subarray(0, buffered).sort();
    this.bufferedCount = 0;
    if (ones.length < buffered) ones = new Float64Array(buffered).fill(1);
    this.current = compressToBins(
      [this.current, { means: sorted, counts: ones.subarray(0, buffered) }],
      this.bins,
    );
  }

  /** Empty the digest for the next bucket, keeping its buffer. */
  reset(): void {
    this.current = EMPTY_CENTROIDS;
    this.bufferedCount = 0;
  }

  /** Centroids and buffered values, for encoding. */
  snapshot(): OpenDigestSnapshot {
    return {
      means: this.current.means,
      counts: this.current.counts,
      buffer: this.buffer.slice(0, this.bufferedCount),
    };
  }

  /** A digest from its snapshot (throws RangeError when the buffer exceeds its capacity). */
  static restore(snapshot: OpenDigestSnapshot, bins: number, bufferSize: number): OpenDigest {
    if (snapshot.buffer.length >= bufferSize)
      throw new RangeError('open digest buffer larger than its capacity');
    const digest = new OpenDigest(bins, bufferSize);
    digest.current = { means: snapshot.means, counts: snapshot.counts };
    digest.buffer.set(snapshot.buffer);
    digest.bufferedCount = snapshot.buffer.length;
    return digest;
  }
}
