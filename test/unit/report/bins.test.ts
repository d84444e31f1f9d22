import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { AdaptiveBins, type Bin } from '../../../libs/report/bins.js';
import { rng } from './data.js';

const binOf = (bins: Bin[], width: number, ts: number): Bin | undefined =>
  bins.find((b) => ts >= b.start && ts < b.start + width);

describe('AdaptiveBins', () => {
  it('stays within its slot count however many readings and however long the span', () => {
    const b = new AdaptiveBins({ slots: 50, initialWidthMs: 1000 });
    const r = rng(3);
    const start = Date.UTC(2026, 0, 1);
    for (let i = 0; i < 200_000; i++) b.add(start + i * 7_000, r());
    const bins = b.bins();
    expect(bins.length).toBeLessThanOrEqual(50);
    expect(bins.reduce((n, x) => n + x.count, 0)).toBe(200_000);
    // The span (16 days) fits in 50 slots of the final width, and no coarser than needed.
    const span = 199_999 * 7_000;
    expect(b.widthMs * 50).toBeGreaterThan(span);
    expect((b.widthMs / 2) * 50).toBeLessThan(span + 2 * b.widthMs);
  });

  it('keeps every single spike as a bin extreme (min/max survive merging)', () => {
    fc.assert(
      fc.property(
        fc.array(
          fc.tuple(fc.integer({ min: 0, max: 50_000_000 }), fc.double({ min: -1e6, max: 1e6, noNaN: true })),
          { minLength: 1, maxLength: 400 },
        ),
        fc.integer({ min: 2, max: 40 }),
        (points, slots) => {
          const b = new AdaptiveBins({ slots, initialWidthMs: 1000 });
          for (const [ts, v] of points) b.add(ts, v);
          const bins = b.bins();
          expect(bins.length).toBeLessThanOrEqual(slots);
          for (const [ts, v] of points) {
            const bin = binOf(bins, b.widthMs, ts)!;
            expect(bin.min).toBeLessThanOrEqual(v);
            expect(bin.max).toBeGreaterThanOrEqual(v);
          }
          const all = points.map((p) => p[1]);
          expect(Math.max(...bins.map((x) => x.max))).toBe(Math.max(...all));
          expect(Math.min(...bins.map((x) => x.min))).toBe(Math.min(...all));
          // Each bin's extremes are readings that fell in it.
          for (const bin of bins) {
            const inside = points
              .filter(([ts]) => ts >= bin.start && ts < bin.start + b.widthMs)
              .map((p) => p[1]);
            expect(bin.count).toBe(inside.length);
            expect(bin.max).toBe(Math.max(...inside));
            expect(bin.min).toBe(Math.min(...inside));
          }
        },
      ),
      { numRuns: 150 },
    );
  });

  it('gives the same bins whatever order the readings arrive in', () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.integer({ min: 0, max: 9_000_000 }), fc.integer({ min: -1000, max: 1000 })), {
          minLength: 1,
          maxLength: 200,
        }),
        fc.infiniteStream(fc.nat()),
        (points, order) => {
          const shuffled = [...points];
          const it = order[Symbol.iterator]();
          for (let i = shuffled.length - 1; i > 0; i--) {
            const j = it.next().value % (i + 1);
            [shuffled[i], shuffled[j]] = [shuffled[j], shuffled[i]];
          }
          const a = new AdaptiveBins({ slots: 16, initialWidthMs: 1000 });
          const b = new AdaptiveBins({ slots: 16, initialWidthMs: 1000 });
          for (const [ts, v] of points) a.add(ts, v);
          for (const [ts, v] of shuffled) b.add(ts, v);
          expect(b.widthMs).toBe(a.widthMs);
          expect(b.bins()).toEqual(a.bins());
        },
      ),
      { numRuns: 150 },
    );
  });

  it('keeps the latest sample of a last channel per bin and adds sum channels', () => {
    const b = new AdaptiveBins({
      slots: 4,
      initialWidthMs: 1000,
      lastChannels: ['median'],
      sumChannels: ['raised'],
    });
    b.addSampled(500, 1, [10]);
    b.addSampled(200, 2, [20]); // earlier ts: does not replace the later sample
    b.addSampled(1500, 3, [30]);
    b.addSum(1600, 0);
    b.addSum(1700, 0, 2);
    expect(b.bins().map((x) => [x.start, x.count, x.last.median, x.sum.raised])).toEqual([
      [0, 2, 10, 0],
      [1000, 1, 30, 3],
    ]);
    // Span 0..9.5 s outgrows 4 slots of 1 s, then of 2 s: width 4 s, samples merge by latest ts.
    b.addSampled(9500, 4, [NaN]);
    expect(b.widthMs).toBe(4000);
    expect(b.bins().map((x) => [x.start, x.count, x.min, x.max, x.last.median, x.sum.raised])).toEqual([
      [0, 3, 1, 3, 30, 3],
      [8000, 1, 4, 4, NaN, 0],
    ]);
  });
});
