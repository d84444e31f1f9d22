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
  baseline: Pick<Baseline, 'q1' | 'median' | 'q3' | 'iqr'>,
  settings: Pick<SensorSettings, 'fenceK' | 'outerK'>,
): Float64Array {
  const fences = fencesOf(baseline, settings);
  return Float64Array.of(baseline.median, fences.lower, fences.upper, fences.lowerOuter, fences.upperOuter);
}

/** Five NaNs: no baseline yet (the chart leaves a gap). */
export const NO_BAND: Float64Array = Float64Array.of(NaN, NaN, NaN, NaN, NaN);
