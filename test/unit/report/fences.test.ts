import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { DEFAULT_SETTINGS } from '../../../libs/config/settings.js';
import { fencesOf } from '../../../libs/engine/judge.js';
import type { Baseline } from '../../../libs/engine/window.js';
import { fenceBand } from '../../../libs/report/fences.js';

describe('fenceBand', () => {
  it('is Tukey fences Q1 - k*IQR and Q3 + k*IQR (Tukey 1977, EDA 2C) with inner and outer k', () => {
    // Hand-worked: Q1 = 10, Q3 = 20, IQR = 10; k = 1.5 -> -5 / 35, k = 3 -> -20 / 50.
    expect([...fenceBand({ q1: 10, median: 14, q3: 20, iqr: 10 }, { fenceK: 1.5, outerK: 3 })]).toEqual([
      14, -5, 35, -20, 50,
    ]);
  });

  it('draws exactly the fences the engine judges with', () => {
    fc.assert(
      fc.property(
        fc.double({ min: -1e6, max: 1e6, noNaN: true }),
        fc.double({ min: 0, max: 1e4, noNaN: true }),
        fc.double({ min: 0, max: 1e4, noNaN: true }),
        fc.double({ min: 0.1, max: 5, noNaN: true }),
        fc.double({ min: 0.1, max: 5, noNaN: true }),
        (q1, a, c, k, extra) => {
          const median = q1 + a;
          const q3 = median + c;
          const s = { ...DEFAULT_SETTINGS, fenceK: k, outerK: k + extra };
          const b = { q1, median, q3, iqr: q3 - q1 } as Baseline;
          const f = fencesOf(b, s);
          const band = fenceBand(b, s);
          expect(band[0]).toBe(median);
          expect(band[1]).toBeCloseTo(f.lower, 6);
          expect(band[2]).toBeCloseTo(f.upper, 6);
          expect(band[3]).toBeCloseTo(f.lowerOuter, 6);
          expect(band[4]).toBeCloseTo(f.upperOuter, 6);
        },
      ),
    );
  });
});
