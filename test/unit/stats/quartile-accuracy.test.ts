/**
 * The published quartile accuracy bound of the shipped sketch design (README "Sketch accuracy and
 * size"): worst quartile rank error at most 0.5 % for buckets of 60 to 10,000 readings, with 12
 * (the default) and 10 buckets, on continuous and discrete data. The bound is our own target (the
 * project's, not a published figure); the full sweep, with the classic design beside it, is
 * `npm run bench -- quartile`. The exact quartiles come from the sorted readings themselves.
 */
import { describe, expect, it } from 'vitest';
import { DISTRIBUTIONS, shippedAccuracy } from '../../support/quartile-accuracy.js';

const BOUND = 0.005;

describe('quartile rank error of the rolling baseline', () => {
  for (const buckets of [12, 10]) {
    for (const dist of DISTRIBUTIONS) {
      it(`${buckets} buckets, ${dist.name}: at most 0.5 % for 60 to 10,000 readings per bucket`, () => {
        for (const perBucket of [60, 180, 1000, 10_000]) {
          const row = shippedAccuracy(perBucket, buckets, dist, 11);
          expect(row.baselines).toBeGreaterThan(0);
          expect(row.worst, `${perBucket} readings per bucket`).toBeLessThanOrEqual(BOUND);
          // The 16 KB state budget per sensor holds too.
          expect(row.maxStateBytes).toBeLessThanOrEqual(16 * 1024);
        }
      });
    }
  }
});
