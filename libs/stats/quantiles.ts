/**
 * Exact sample quantiles for audits and tests. Conventions follow Hyndman and Fan (1996),
 * "Sample quantiles in statistical packages": type 7 (R and NumPy default) and type 6
 * (ranks at p(n+1), as in the NIST e-Handbook). Inputs must be sorted ascending.
 */
export function quantileType7(sorted: ArrayLike<number>, probability: number): number {
  const count = sorted.length;
  if (count === 0) return NaN;
  const rank = (count - 1) * probability;
  const lower = Math.floor(rank);
  const upper = Math.min(count - 1, lower + 1);
  return sorted[lower] + (rank - lower) * (sorted[upper] - sorted[lower]);
}

/** Hyndman-Fan type 6 quantile (rank probability × (count + 1), clamped to the ends) of ascending values; NaN when empty. */
export function quantileType6(sorted: ArrayLike<number>, probability: number): number {
  const count = sorted.length;
  if (count === 0) return NaN;
  const rank = (count + 1) * probability;
  if (rank <= 1) return sorted[0];
  if (rank >= count) return sorted[count - 1];
  const lower = Math.floor(rank);
  return sorted[lower - 1] + (rank - lower) * (sorted[lower] - sorted[lower - 1]);
}

/**
 * Exact mid-rank percentile rank of `value` in sorted data, as a fraction in [0, 1]:
 * (count below + half the count equal) / count.
 */
export function exactRank(sorted: ArrayLike<number>, value: number): number {
  const count = sorted.length;
  if (count === 0) return NaN;
  const [below, atOrBelow] = rankBounds(sorted, value);
  return (below + (atOrBelow - below) / 2) / count;
}

/** How many values of sorted data are below `value`, and how many at or below it (binary searches). */
function rankBounds(sorted: ArrayLike<number>, value: number): [number, number] {
  const count = sorted.length;
  let low = 0;
  let high = count;
  while (low < high) {
    const mid = (low + high) >>> 1;
    if (sorted[mid] < value) low = mid + 1;
    else high = mid;
  }
  const below = low;
  high = count;
  while (low < high) {
    const mid = (low + high) >>> 1;
    if (sorted[mid] <= value) low = mid + 1;
    else high = mid;
  }
  return [below, low];
}

/**
 * Quantile accuracy measure used by the audit, the tests and the bench: how far `probability` lies
 * outside the rank range of `estimate` in sorted data, [share below it, share at or below it]; positive
 * when the estimate ranks above the probability, negative when below, 0 inside. With `ties` (data
 * with many equal values), an estimate between two data values gets the rank range of the values
 * either side, since any point between them is an equally good quantile of the data (and a stored
 * mean a rounding step off a repeated value must not count as a whole tie group off).
 */
export function rankRangeError(
  sorted: ArrayLike<number>,
  estimate: number,
  probability: number,
  ties = false,
): number {
  const count = sorted.length;
  let [below, atOrBelow] = rankBounds(sorted, estimate);
  if (ties && below === atOrBelow) {
    const left = below > 0 ? sorted[below - 1] : estimate;
    const right = atOrBelow < count ? sorted[atOrBelow] : estimate;
    while (below > 0 && sorted[below - 1] === left) below--;
    while (atOrBelow < count && sorted[atOrBelow] === right) atOrBelow++;
  }
  const from = below / count;
  const to = atOrBelow / count;
  return probability < from ? from - probability : probability > to ? -(probability - to) : 0;
}
