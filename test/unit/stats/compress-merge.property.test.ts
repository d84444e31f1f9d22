/**
 * `compressToBins` merges its lists pairwise (a stable merge sort of sorted runs) instead of the
 * k-way head scan it had, and `compressPackedToBins` reads packed lists without unpacking each
 * first. Both must give bit for bit what the k-way version gave (test/support/digest-reference.ts)
 * on any input: replays stay byte-identical and saved state restores to the same baselines.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  compressPackedToBins,
  compressToBins,
  OpenDigest,
  packCentroids,
  unpackCentroids,
  type Centroids,
} from '../../../libs/stats/digest.js';
import { closedBins, openBins, SKETCH } from '../../../libs/engine/sketch-params.js';
import { referenceCompressToBins } from '../../support/digest-reference.js';

// Ties matter most (they decide which list goes first), so small integers are frequent.
const valueArb = fc.oneof(
  fc.double({ min: -1e6, max: 1e6, noNaN: true, noDefaultInfinity: true }),
  fc.integer({ min: -5, max: 5 }),
  fc.constantFrom(0, -0, 1e-300, 100.5),
);
const countArb = fc.integer({ min: 1, max: 50 });

/** A list in ascending mean order with arbitrary positive counts. */
const sortedListArb = fc.array(fc.tuple(valueArb, countArb), { maxLength: 400 }).map((pairs): Centroids => {
  const sorted = [...pairs].sort((a, b) => a[0] - b[0]);
  return {
    means: Float64Array.from(sorted, (pair) => pair[0]),
    counts: Float64Array.from(sorted, (pair) => pair[1]),
  };
});

/** A list in any order (not produced by the engine, but the result must still be the reference's). */
const anyListArb = fc.array(fc.tuple(valueArb, countArb), { maxLength: 60 }).map((pairs): Centroids => ({
  means: Float64Array.from(pairs, (pair) => pair[0]),
  counts: Float64Array.from(pairs, (pair) => pair[1]),
}));

const binsArb = fc.constantFrom(1, 2, 7, closedBins(12), SKETCH.baselineBins, 2000);

function expectSame(actual: Centroids, expected: Centroids): void {
  expect(Array.from(actual.means)).toEqual(Array.from(expected.means));
  expect(Array.from(actual.counts)).toEqual(Array.from(expected.counts));
  // toEqual treats 0 and -0 alike; the bits must match too.
  for (let index = 0; index < expected.means.length; index++) {
    expect(Object.is(actual.means[index], expected.means[index])).toBe(true);
  }
}

describe('compressToBins: pairwise merge equals the k-way reference (property)', () => {
  it('gives the same centroids for sorted lists, 1 to 30 of them', () => {
    fc.assert(
      fc.property(fc.array(sortedListArb, { minLength: 1, maxLength: 30 }), binsArb, (parts, bins) => {
        expectSame(compressToBins(parts, bins), referenceCompressToBins(parts, bins));
      }),
      { numRuns: 300 },
    );
  });

  it('gives the same centroids for lists in any order', () => {
    fc.assert(
      fc.property(fc.array(anyListArb, { minLength: 1, maxLength: 8 }), binsArb, (parts, bins) => {
        expectSame(compressToBins(parts, bins), referenceCompressToBins(parts, bins));
      }),
      { numRuns: 300 },
    );
  });

  it('compressPackedToBins equals the reference over the unpacked lists', () => {
    const bucketArb = fc.array(valueArb, { minLength: 0, maxLength: 600 }).map((values) => {
      const open = new OpenDigest(openBins(12), SKETCH.openCap);
      for (const value of values) open.push(value);
      return packCentroids(compressToBins([open.centroids()], closedBins(12)));
    });
    fc.assert(
      fc.property(fc.array(bucketArb, { minLength: 0, maxLength: 24 }), binsArb, (packed, bins) => {
        const expected = referenceCompressToBins(packed.map(unpackCentroids), bins);
        expectSame(compressPackedToBins(packed, bins), expected);
      }),
      { numRuns: 200 },
    );
  });
});
