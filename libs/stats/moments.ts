/**
 * Mergeable first and second moments: count, mean and M2 (sum of squared deviations).
 * Welford (1962) within a stream, Chan, Golub and LeVeque (1979) to merge two summaries.
 * Both stay accurate when values carry a large offset, where sum-of-squares formulas fail.
 */
export interface Moments {
  n: number;
  mean: number;
  m2: number;
}

/** Moments of no values. */
export function emptyMoments(): Moments {
  return { n: 0, mean: 0, m2: 0 };
}

/** Welford's update, in place. */
export function addValue(m: Moments, x: number): void {
  m.n += 1;
  const d = x - m.mean;
  m.mean += d / m.n;
  m.m2 += d * (x - m.mean);
}

/** Chan et al. pairwise merge; returns a new summary and leaves the inputs untouched. */
export function mergeMoments(a: Moments, b: Moments): Moments {
  if (a.n === 0) return { ...b };
  if (b.n === 0) return { ...a };
  const n = a.n + b.n;
  const d = b.mean - a.mean;
  return { n, mean: a.mean + (d * b.n) / n, m2: a.m2 + b.m2 + (d * d * a.n * b.n) / n };
}

/** Sample variance (n - 1 in the denominator); 0 when fewer than two values. */
export function sampleVariance(m: Moments): number {
  return m.n < 2 ? 0 : Math.max(0, m.m2 / (m.n - 1));
}

/** Sample standard deviation (n − 1 denominator); 0 for fewer than two values. */
export function sampleStdDev(m: Moments): number {
  return Math.sqrt(sampleVariance(m));
}
