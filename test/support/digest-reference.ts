/**
 * The k-way compression `compressToBins` had before its pairwise merge (commit 2422667), kept
 * as the reference its property test compares the shipped one with, bit for bit. It scans every
 * list's head for each centroid taken; fresh scratch per call (speed does not matter here).
 */
import { EMPTY_CENTROIDS, totalCount, type Centroids } from '../../libs/stats/digest.js';

/** compressToBins as it was: k-way merge (smallest head, ties to the earlier list), then bins. */
export function referenceCompressToBins(parts: readonly Centroids[], bins: number): Centroids {
  const partCount = parts.length;
  let len = 0;
  let total = 0;
  for (let part = 0; part < partCount; part++) {
    len += parts[part].means.length;
    total += totalCount(parts[part]);
  }
  if (len === 0) return EMPTY_CENTROIDS;
  const outMeans = new Float64Array(len);
  const outCounts = new Float64Array(len);
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
    for (let part = 0; part < partCount; part++) {
      const index = positions[part];
      const means = parts[part].means;
      if (index < means.length && (best < 0 || means[index] < bestMean)) {
        best = part;
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
