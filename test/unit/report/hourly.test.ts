import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { HOUR_MS, HourlyCounts, hourBars } from '../../../libs/report/hourly.js';
import { rateChart } from '../../../libs/report/charts.js';

const T0 = Date.UTC(2026, 0, 5, 6, 0, 0);

describe('alert rate per clock hour', () => {
  it('one alert in an hour is a bar of 1/h, never over a 6/h budget', () => {
    const counts = new HourlyCounts();
    // Four single alerts spread over a day of data, as in the sample data set.
    for (const minutes of [70, 400, 800, 1300]) counts.add(T0 + minutes * 60_000);
    const bars = hourBars(counts, T0, T0 + 24 * HOUR_MS - 1, 168);
    expect(bars).toHaveLength(24);
    expect(bars.filter((b) => b.total > 0).map((b) => b.maxPerHour)).toEqual([1, 1, 1, 1]);
    const svg = rateChart({ bars, budgetPerHour: 6, floodPerHour: 60 });
    expect(svg).not.toContain('class="bar over"');
    expect(svg.match(/class="bar"/g)).toHaveLength(4);
  });

  it('bars follow UTC hour boundaries and cover the whole data span, not only the alerts', () => {
    const counts = new HourlyCounts();
    counts.add(T0 + 30 * 60_000);
    counts.add(T0 + HOUR_MS - 1); // last ms of the first hour
    counts.add(T0 + HOUR_MS); // first ms of the second hour
    const bars = hourBars(counts, T0 - 5 * HOUR_MS + 1, T0 + 10 * HOUR_MS, 168);
    expect(bars[0].start).toBe(T0 - 5 * HOUR_MS);
    expect(bars[bars.length - 1].end).toBe(T0 + 11 * HOUR_MS);
    const first = bars.find((b) => b.start === T0)!;
    const second = bars.find((b) => b.start === T0 + HOUR_MS)!;
    expect(first.total).toBe(2);
    expect(second.total).toBe(1);
  });

  it('seven alerts within one clock hour are over a 6/h budget', () => {
    const counts = new HourlyCounts();
    for (let i = 0; i < 7; i++) counts.add(T0 + i * 5 * 60_000);
    const bars = hourBars(counts, T0, T0 + 3 * HOUR_MS, 168);
    expect(bars[0].maxPerHour).toBe(7);
    expect(rateChart({ bars, budgetPerHour: 6, floodPerHour: 60 })).toContain('class="bar over"');
  });

  it('grouped bars keep every alert and show the busiest single hour', () => {
    fc.assert(
      fc.property(
        fc.array(fc.integer({ min: 0, max: 90 * 24 * HOUR_MS }), { minLength: 1, maxLength: 300 }),
        fc.integer({ min: 1, max: 200 }),
        (offsets, maxBars) => {
          const counts = new HourlyCounts();
          const perHour = new Map<number, number>();
          for (const o of offsets) {
            counts.add(T0 + o);
            const h = Math.floor((T0 + o) / HOUR_MS);
            perHour.set(h, (perHour.get(h) ?? 0) + 1);
          }
          const to = T0 + Math.max(...offsets);
          const bars = hourBars(counts, T0, to, maxBars);
          expect(bars.length).toBeLessThanOrEqual(maxBars);
          expect(bars.reduce((n, b) => n + b.total, 0)).toBe(offsets.length);
          for (const b of bars) {
            expect(b.start % HOUR_MS).toBe(0);
            expect(b.end % HOUR_MS).toBe(0);
            let busiest = 0;
            for (let h = b.start / HOUR_MS; h < b.end / HOUR_MS; h++)
              busiest = Math.max(busiest, perHour.get(h) ?? 0);
            expect(b.maxPerHour).toBe(busiest);
          }
          // Bars tile the span without gaps.
          for (let i = 1; i < bars.length; i++) expect(bars[i].start).toBe(bars[i - 1].end);
        },
      ),
      { numRuns: 100 },
    );
  });
});
