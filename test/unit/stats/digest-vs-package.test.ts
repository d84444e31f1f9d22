/**
 * The engine's merging digest against the npm `tdigest` package (a reference t-digest from the
 * registry, Dunning's original clustering form) on the same values: the quartile rank error of
 * our sketch must be of the same order as the package's. Rank error is measured against exact
 * mid-ranks of the same sample (libs/stats/quantiles.ts).
 */
import tdigest from 'tdigest';
import { describe, expect, it } from 'vitest';
import { FrozenDigest, OpenDigest, compressToBins } from '../../../libs/stats/digest.js';
import { exactRank } from '../../../libs/stats/quantiles.js';
import { closedBins, openBins, SKETCH } from '../../../libs/engine/sketch-params.js';
import { Rng } from './random.js';

const cases: [string, (r: Rng) => number][] = [
  ['normal', (r) => r.normal()],
  ['lognormal', (r) => Math.exp(r.normal())],
  ['uniform', (r) => r.uniform()],
];

describe('merging digest vs the tdigest package (reference implementation)', () => {
  for (const [name, draw] of cases) {
    it(`${name}: quartile rank error comparable to the package's`, () => {
      const rng = new Rng(20261201);
      const n = 50_000;
      const values = new Float64Array(n);
      for (let i = 0; i < n; i++) values[i] = draw(rng);
      const ours = new OpenDigest(openBins(12), SKETCH.openCap);
      // The package at its documented default compression (delta 0.01 is its default; 0.05 was
      // the engine's former setting and is coarser, so this compares against the better reference).
      const ref = new tdigest.TDigest(0.01);
      for (const v of values) {
        ours.push(v);
        ref.push(v);
      }
      const frozen = new FrozenDigest(compressToBins([ours.centroids()], closedBins(12)));
      const sorted = Float64Array.from(values).sort();
      for (const p of [0.25, 0.5, 0.75]) {
        const oursErr = Math.abs(exactRank(sorted, frozen.quantile(p)) - p);
        const refErr = Math.abs(exactRank(sorted, ref.percentile(p) as number) - p);
        // Our own bound: within 0.5 % of rank, and no worse than the package by more than 0.3 %.
        expect(oursErr).toBeLessThan(0.005);
        expect(oursErr).toBeLessThan(refErr + 0.003);
      }
    });
  }
});
