/**
 * Exact sample quantiles for audits and tests. Conventions follow Hyndman and Fan (1996),
 * "Sample quantiles in statistical packages": type 7 (R and NumPy default) and type 6
 * (ranks at p(n+1), as in the NIST e-Handbook). Inputs must be sorted ascending.
 */
export function quantileType7(sorted: ArrayLike<number>, p: number): number {
  const n = sorted.length;
  if (n === 0) return NaN;
  const h = (n - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(n - 1, lo + 1);
  return sorted[lo] + (h - lo) * (sorted[hi] - sorted[lo]);
}

/** Hyndman-Fan type 6 quantile (rank p(n + 1), clamped to the ends) of ascending values; NaN when empty. */
export function quantileType6(sorted: ArrayLike<number>, p: number): number {
  const n = sorted.length;
  if (n === 0) return NaN;
  const h = (n + 1) * p;
  if (h <= 1) return sorted[0];
  if (h >= n) return sorted[n - 1];
  const lo = Math.floor(h);
  return sorted[lo - 1] + (h - lo) * (sorted[lo] - sorted[lo - 1]);
}

/**
 * Exact mid-rank percentile rank of x in sorted data, as a fraction in [0, 1]:
 * (count below + half the count equal) / n.
 */
export function exactRank(sorted: ArrayLike<number>, x: number): number {
  const n = sorted.length;
  if (n === 0) return NaN;
  const [below, atOrBelow] = rankBounds(sorted, x);
  return (below + (atOrBelow - below) / 2) / n;
}

/** How many values of sorted data are below x, and how many at or below it (binary searches). */
function rankBounds(sorted: ArrayLike<number>, x: number): [number, number] {
  const n = sorted.length;
  let lo = 0;
  let hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid] < x) lo = mid + 1;
    else hi = mid;
  }
  const below = lo;
  hi = n;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid] <= x) lo = mid + 1;
    else hi = mid;
  }
  return [below, lo];
}

/**
 * Quantile accuracy measure used by the audit, the tests and the bench: how far p lies outside the
 * rank range of the estimate x in sorted data, [share below x, share at or below x]; positive when x
 * ranks above p, negative when below, 0 inside. With `ties` (data with many equal values), an x
 * between two data values gets the rank range of the values either side, since any point between
 * them is an equally good quantile of the data (and a stored mean a rounding step off a repeated
 * value must not count as a whole tie group off).
 */
export function rankRangeError(sorted: ArrayLike<number>, x: number, p: number, ties = false): number {
  const n = sorted.length;
  let [below, atOrBelow] = rankBounds(sorted, x);
  if (ties && below === atOrBelow) {
    const left = below > 0 ? sorted[below - 1] : x;
    const right = atOrBelow < n ? sorted[atOrBelow] : x;
    while (below > 0 && sorted[below - 1] === left) below--;
    while (atOrBelow < n && sorted[atOrBelow] === right) atOrBelow++;
  }
  const from = below / n;
  const to = atOrBelow / n;
  return p < from ? from - p : p > to ? -(p - to) : 0;
}
