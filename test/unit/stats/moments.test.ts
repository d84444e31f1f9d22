import { describe, expect, it } from 'vitest';
import {
  addValue,
  emptyMoments,
  mergeMoments,
  sampleStdDev,
  sampleVariance,
} from '../../../libs/stats/moments.js';

const of = (xs: number[]) => {
  const m = emptyMoments();
  for (const x of xs) addValue(m, x);
  return m;
};

describe('moments (Welford 1962; Chan, Golub and LeVeque 1979)', () => {
  it('{4, 7, 13, 16}: mean 10, s^2 30 (computed check values, reference-values.md "Mean and variance")', () => {
    const m = of([4, 7, 13, 16]);
    expect(m.n).toBe(4);
    expect(m.mean).toBe(10);
    expect(sampleVariance(m)).toBe(30);
    expect(sampleStdDev(m)).toBeCloseTo(Math.sqrt(30), 14);
  });

  it('the same values + 1e9 still give s^2 = 30 (where the sum-of-squares formula fails)', () => {
    const xs = [4, 7, 13, 16].map((x) => x + 1e9);
    const m = of(xs);
    expect(m.mean).toBe(1e9 + 10);
    expect(sampleVariance(m)).toBeCloseTo(30, 9);
    // The naive formula loses it, which is why the engine does not use it (shows the check can fail).
    const n = xs.length;
    const s = xs.reduce((a, b) => a + b, 0);
    const ss = xs.reduce((a, b) => a + b * b, 0);
    expect(Math.abs((ss - (s * s) / n) / (n - 1) - 30)).toBeGreaterThan(1);
  });

  it('merging {4, 7} with {13, 16} gives M2 = 90 (Chan et al. 1979; computed check value)', () => {
    const a = of([4, 7]);
    const b = of([13, 16]);
    const m = mergeMoments(a, b);
    expect(m.n).toBe(4);
    expect(m.mean).toBe(10);
    expect(m.m2).toBe(90);
    // Inputs untouched.
    expect(a).toEqual({ n: 2, mean: 5.5, m2: 4.5 });
  });

  it('merging with an empty summary is the identity; fewer than two values have variance 0', () => {
    const a = of([1, 2, 3]);
    expect(mergeMoments(a, emptyMoments())).toEqual(a);
    expect(mergeMoments(emptyMoments(), a)).toEqual(a);
    expect(sampleVariance(of([5]))).toBe(0);
    expect(sampleVariance(emptyMoments())).toBe(0);
  });
});
