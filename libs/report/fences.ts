/**
 * The fence band drawn in the report for one baseline: the median and the inner and outer
 * Tukey fences, computed by the engine's own `fencesOf`, so the chart shows exactly what the
 * rules use.
 */
import type { SensorSettings } from '../config/settings.js';
import { fencesOf } from '../engine/judge.js';
import type { Baseline } from '../engine/window.js';

/** [median, lower, upper, lowerOuter, upperOuter], the order of FENCE_CHANNELS. */
export function fenceBand(
  b: Pick<Baseline, 'q1' | 'median' | 'q3' | 'iqr'>,
  s: Pick<SensorSettings, 'fenceK' | 'outerK'>,
): Float64Array {
  const f = fencesOf(b, s);
  return Float64Array.of(b.median, f.lower, f.upper, f.lowerOuter, f.upperOuter);
}

/** Five NaNs: no baseline yet (the chart leaves a gap). */
export const NO_BAND: Float64Array = Float64Array.of(NaN, NaN, NaN, NaN, NaN);
