import { describe, expect, it } from 'vitest';
import { quantileSorted } from 'simple-statistics';
import { exactRank, quantileType6, quantileType7 } from '../../../libs/stats/quantiles.js';
import { Rng } from './random.js';

const sorted = (xs: number[]) => [...xs].sort((a, b) => a - b);

// Source for the vectors: Hyndman and Fan (1996), "Sample quantiles in statistical packages",
// The American Statistician 50(4); values as listed in /work/shared/notes/reference-values.md
// (computed; Excel QUARTILE.EXC = type 6 per Microsoft's documentation).
describe('exact quantiles, Hyndman and Fan type 7 (R and NumPy default)', () => {
  it('{6, 7, 15, 36, 39, 40, 41, 42, 43, 47, 49}: 25.5 / 40 / 42.5', () => {
    const x = [6, 7, 15, 36, 39, 40, 41, 42, 43, 47, 49];
    expect(quantileType7(x, 0.25)).toBe(25.5);
    expect(quantileType7(x, 0.5)).toBe(40);
    expect(quantileType7(x, 0.75)).toBe(42.5);
  });
  it('{1, 2, 4, 7, 8, 9, 10, 12}: Q1 3.5', () => {
    expect(quantileType7([1, 2, 4, 7, 8, 9, 10, 12], 0.25)).toBe(3.5);
  });
  it('{7, 15, 36, 39, 40, 41}: 20.25 / 37.5 / 39.75', () => {
    const x = [7, 15, 36, 39, 40, 41];
    expect(quantileType7(x, 0.25)).toBe(20.25);
    expect(quantileType7(x, 0.5)).toBe(37.5);
    expect(quantileType7(x, 0.75)).toBe(39.75);
  });
  it('ends and empty input', () => {
    expect(quantileType7([3, 9], 0)).toBe(3);
    expect(quantileType7([3, 9], 1)).toBe(9);
    expect(quantileType7([], 0.5)).toBeNaN();
  });
  it('agrees with simple-statistics quantileSorted, which documents itself as type 7 ("(n-1)*p", NumPy linear)', () => {
    // simple-statistics 7.x src/quantile_sorted.js: "This implements the linear interpolation method
    // (type=7 in R/numpy)". Older releases used a different rule; this pins the installed one.
    const rng = new Rng(7);
    for (let t = 0; t < 200; t++) {
      const n = rng.int(1, 60);
      const x = sorted(Array.from({ length: n }, () => Math.round(rng.normal() * 1000) / 10));
      for (const p of [0, 0.1, 0.25, 0.5, 0.75, 0.9, 0.99, 1]) {
        expect(quantileType7(x, p)).toBeCloseTo(quantileSorted(x, p), 10);
      }
    }
  });
});

describe('exact quantiles, Hyndman and Fan type 6 (rank p(n+1); Excel QUARTILE.EXC; NIST)', () => {
  it('{6, 7, 15, 36, 39, 40, 41, 42, 43, 47, 49}: Q1 15, Q3 43', () => {
    const x = [6, 7, 15, 36, 39, 40, 41, 42, 43, 47, 49];
    expect(quantileType6(x, 0.25)).toBe(15);
    expect(quantileType6(x, 0.75)).toBe(43);
  });
  it('{1, 2, 4, 7, 8, 9, 10, 12}: Q1 2.5, Q3 9.75', () => {
    const x = [1, 2, 4, 7, 8, 9, 10, 12];
    expect(quantileType6(x, 0.25)).toBe(2.5);
    expect(quantileType6(x, 0.75)).toBe(9.75);
  });
  it('{7, 15, 36, 39, 40, 41}: 13 / 37.5 / 40.25', () => {
    const x = [7, 15, 36, 39, 40, 41];
    expect(quantileType6(x, 0.25)).toBe(13);
    expect(quantileType6(x, 0.5)).toBe(37.5);
    expect(quantileType6(x, 0.75)).toBe(40.25);
  });
  it('NIST/SEMATECH e-Handbook section 7.2.5.2 resistivity example: 90th percentile 95.1981, median 95.1579', () => {
    const x = sorted([
      95.1772, 95.1567, 95.1937, 95.1959, 95.1442, 95.061, 95.1591, 95.1195, 95.1065, 95.0925, 95.199,
      95.1682,
    ]);
    expect(quantileType6(x, 0.9)).toBeCloseTo(95.1981, 4);
    expect(quantileType6(x, 0.5)).toBeCloseTo(95.1579, 4);
  });
  it('clamps outside the ranks 1..n', () => {
    expect(quantileType6([1, 2, 3], 0.01)).toBe(1);
    expect(quantileType6([1, 2, 3], 0.99)).toBe(3);
  });
});

describe('exactRank (mid-rank: below + half of equal, over n)', () => {
  it('counts ties by half', () => {
    const x = [1, 2, 2, 2, 5];
    expect(exactRank(x, 2)).toBeCloseTo((1 + 1.5) / 5, 15);
    expect(exactRank(x, 0)).toBe(0);
    expect(exactRank(x, 9)).toBe(1);
    expect(exactRank(x, 3)).toBe(0.8);
    expect(exactRank([], 1)).toBeNaN();
  });
});
