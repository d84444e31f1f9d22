/**
 * The fence band drawn in the report for one baseline: Tukey's fences Q1 - k*IQR and Q3 + k*IQR
 * with the sensor's inner (fenceK) and outer (outerK) multipliers, plus the median. Computed here
 * from the baseline and settings so the report shows what the rules use without reaching into
 * engine caches.
 */
import type { SensorSettings } from '../config/settings.js';

export interface BaselineQuartiles {
  q1: number;
  median: number;
  q3: number;
}

/** [median, lower, upper, lowerOuter, upperOuter], the order of FENCE_CHANNELS. */
export function fenceBand(b: BaselineQuartiles, s: Pick<SensorSettings, 'fenceK' | 'outerK'>): Float64Array {
  const iqr = b.q3 - b.q1;
  return Float64Array.of(
    b.median,
    b.q1 - s.fenceK * iqr,
    b.q3 + s.fenceK * iqr,
    b.q1 - s.outerK * iqr,
    b.q3 + s.outerK * iqr,
  );
}

/** Five NaNs: no baseline yet (the chart leaves a gap). */
export const NO_BAND: Float64Array = Float64Array.of(NaN, NaN, NaN, NaN, NaN);
