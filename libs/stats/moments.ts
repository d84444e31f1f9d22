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
export function addValue(moments: Moments, value: number): void {
  moments.n += 1;
  const delta = value - moments.mean;
  moments.mean += delta / moments.n;
  moments.m2 += delta * (value - moments.mean);
}

/** Chan et al. pairwise merge; returns a new summary and leaves the inputs untouched. */
export function mergeMoments(left: Moments, right: Moments): Moments {
  if (left.n === 0) return { ...right };
  if (right.n === 0) return { ...left };
  const count = left.n + right.n;
  const delta = right.mean - left.mean;
  return {
    n: count,
    mean: left.mean + (delta * right.n) / count,
    m2: left.m2 + right.m2 + (delta * delta * left.n * right.n) / count,
  };
}

/** Sample variance (n - 1 in the denominator); 0 when fewer than two values. */
export function sampleVariance(moments: Moments): number {
  return moments.n < 2 ? 0 : Math.max(0, moments.m2 / (moments.n - 1));
}

/** Sample standard deviation (n − 1 denominator); 0 for fewer than two values. */
export function sampleStdDev(moments: Moments): number {
  return Math.sqrt(sampleVariance(moments));
}
