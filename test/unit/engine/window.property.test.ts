/**
 * Window rotation with out-of-order readings, checked against a plain model:
 * - a reading older than the window before the sensor's newest reading is rejected as late;
 * - every accepted reading lands in the bucket that is open when it arrives (late-but-inside
 *   readings included), and buckets older than the window are dropped whole, so baseline count +
 *   open-bucket count = accepted readings minus those in dropped buckets;
 * - the baseline a reading is judged against never contains that reading (it is in the open bucket).
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { validateConfig } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';

const WINDOW = 10_000;
const BUCKETS = 10;
const BUCKET = WINDOW / BUCKETS;
const T0 = Date.UTC(2026, 3, 1);

const stepsArb = fc.array(
  fc.tuple(
    fc.oneof(
      { weight: 10, arbitrary: fc.integer({ min: 0, max: 500 }) },
      { weight: 3, arbitrary: fc.integer({ min: -15_000, max: -1 }) },
      { weight: 1, arbitrary: fc.integer({ min: 1_000, max: 25_000 }) },
    ),
    fc.integer({ min: 0, max: 100 }),
  ),
  { minLength: 1, maxLength: 400, size: 'max' },
);

describe('window rotation with out-of-order readings (property)', () => {
  it('late rejection, bucket accounting and baseline exclusion match the model', () => {
    let lateSeen = 0;
    let dropsSeen = 0;
    fc.assert(
      fc.property(stepsArb, (steps) => {
        const engine = new Engine(
          validateConfig({ defaults: { window: '10s', buckets: BUCKETS, minSamples: 2, flatlineAfter: 0 } }),
        );
        const sensor = 'tank-4/level';
        let ts = T0;
        let newest = -1;
        let openIndex = -1;
        /** The bucket index each accepted reading was added to. */
        const landed: number[] = [];
        for (const [d, value] of steps) {
          ts = Math.max(0, ts + d);
          const out = engine.process({ sensor, ts, value });
          const late = newest >= 0 && ts < newest - WINDOW;
          expect(out.accepted).toBe(!late);
          if (late) {
            expect(out.accepted ? null : out.reason).toBe('late');
            lateSeen++;
            continue;
          }
          newest = Math.max(newest, ts);
          openIndex = Math.max(openIndex, Math.floor(ts / BUCKET));
          landed.push(openIndex);
          const w = engine.get(sensor)!.window;
          expect(w.openIndex).toBe(openIndex);
          const inWindow = landed.filter((i) => i >= openIndex - BUCKETS);
          if (inWindow.length < landed.length) dropsSeen++;
          const inBaseline = inWindow.filter((i) => i < openIndex).length;
          const b = w.baseline();
          expect(b === null ? 0 : b.count).toBe(inBaseline);
          expect(w.openMoments.n).toBe(inWindow.length - inBaseline);
          // The reading just judged sits in the open bucket, never in its own baseline.
          expect(landed[landed.length - 1]).toBe(openIndex);
        }
      }),
      { numRuns: 150 },
    );
    expect(lateSeen).toBeGreaterThan(50);
    expect(dropsSeen).toBeGreaterThan(50);
  });
});
