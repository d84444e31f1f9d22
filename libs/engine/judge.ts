/**
 * The rules: judge one reading against its sensor's baseline and settings.
 *
 * Zero-spread rule (no division by zero, no NaN): when the baseline's sample standard deviation
 * is 0, z is null and the z rule does not apply; when its IQR is 0, robust z is null and the
 * fence rule does not apply (the fences collapse onto the quartiles). When both are 0 the sensor
 * has read one constant value for the whole window: a reading that differs from it is flagged
 * `departs_constant` (warning), whatever `trigger` says, respecting `direction`.
 */
import type { SensorSettings } from '../config/settings.js';
import { severityRank, type Reason, type Severity } from '../schema/vocabulary.js';
import type { Baseline } from './window.js';

/** The rules' answer for one reading: flagged or not, severity and reasons, and which rules fired. */
export interface Verdict {
  /** The baseline was warm, so statistical rules ran. */
  evaluated: boolean;
  flagged: boolean;
  severity: Severity | null;
  reasons: Reason[];
  /** Per-rule diagnostics before `trigger` combines them (for counts and tuning). */
  fenceHit: boolean;
  outerHit: boolean;
  zHit: boolean;
}

/** The verdict for an unflagged reading before the baseline is warm (shared, frozen: no allocation). */
export const NORMAL_COLD: Verdict = Object.freeze({
  evaluated: false,
  flagged: false,
  severity: null,
  reasons: [] as Reason[],
  fenceHit: false,
  outerHit: false,
  zHit: false,
}) as Verdict;

/** The verdict for an unflagged reading against a warm baseline (shared, frozen). */
export const NORMAL_WARM: Verdict = Object.freeze({ ...NORMAL_COLD, evaluated: true }) as Verdict;

/** Fences derived from a baseline and the sensor's multipliers. */
export interface Fences {
  lower: number;
  upper: number;
  lowerOuter: number;
  upperOuter: number;
}

/** Tukey's fences of a baseline: Q1 − k·IQR and Q3 + k·IQR, inner (fenceK) and outer (outerK). */
export function fencesOf(
  baseline: Pick<Baseline, 'q1' | 'q3' | 'iqr'>,
  settings: Pick<SensorSettings, 'fenceK' | 'outerK'>,
): Fences {
  return {
    lower: baseline.q1 - settings.fenceK * baseline.iqr,
    upper: baseline.q3 + settings.fenceK * baseline.iqr,
    lowerOuter: baseline.q1 - settings.outerK * baseline.iqr,
    upperOuter: baseline.q3 + settings.outerK * baseline.iqr,
  };
}

/** z, or null when the baseline has no spread. */
export function zScore(value: number, baseline: Baseline): number | null {
  return baseline.stdDev > 0 ? (value - baseline.mean) / baseline.stdDev : null;
}

/** Robust z from median and IQR (sigma ~ IQR / 1.349 for normal data), or null when IQR is 0. */
export function robustZ(value: number, baseline: Baseline): number | null {
  return baseline.iqr > 0 ? ((value - baseline.median) * 1.349) / baseline.iqr : null;
}

/** Collects reasons and the highest severity; allocated only for readings that are flagged. */
class Flags {
  reasons: Reason[] = [];
  severity: Severity | null = null;
  add(reason: Reason, severity: Severity): void {
    this.reasons.push(reason);
    if (severityRank(severity) > severityRank(this.severity)) this.severity = severity;
  }
}

/**
 * Judge one reading against its sensor's baseline: physical limits first (no baseline needed), then,
 * once the baseline holds `minSamples`, the fence and z rules combined by `trigger`, a departure
 * from a constant baseline and a flatline (`stuckRun` identical values). Pure: the verdict depends
 * on the arguments only; the open bucket is never part of `baseline`.
 *
 * @example
 * const fences = fencesOf(baseline, settings); // cached per baseline by the engine
 * const verdict = judge(97.2, settings, baseline, fences, 1);
 * // { evaluated: true, flagged: true, severity: 'critical', reasons: ['outer_fence_high', 'z_high'], ... }
 */
export function judge(
  value: number,
  settings: SensorSettings,
  baseline: Baseline | null,
  fences: Fences | null,
  stuckRun: number,
): Verdict {
  let flags: Flags | null = null;
  const high = settings.direction !== 'low';
  const low = settings.direction !== 'high';

  // Physical limits need no baseline and ignore `direction`: they are explicit.
  if (settings.max !== null && value > settings.max) (flags ??= new Flags()).add('limit_high', 'critical');
  if (settings.min !== null && value < settings.min) (flags ??= new Flags()).add('limit_low', 'critical');

  if (baseline === null || fences === null || baseline.count < settings.minSamples) {
    return flags === null
      ? NORMAL_COLD
      : { ...NORMAL_COLD, flagged: true, severity: flags.severity, reasons: flags.reasons };
  }

  // Fence rule.
  let fenceSev: Severity | null = null;
  let fenceReason: Reason = 'fence_high';
  if (baseline.iqr > 0) {
    if (high && value > fences.upper) {
      fenceSev = value > fences.upperOuter ? 'critical' : 'warning';
      fenceReason = value > fences.upperOuter ? 'outer_fence_high' : 'fence_high';
    } else if (low && value < fences.lower) {
      fenceSev = value < fences.lowerOuter ? 'critical' : 'warning';
      fenceReason = value < fences.lowerOuter ? 'outer_fence_low' : 'fence_low';
    }
  }
  // z rule.
  let zSev: Severity | null = null;
  let zReason: Reason = 'z_high';
  if (baseline.stdDev > 0) {
    const zValue = (value - baseline.mean) / baseline.stdDev;
    if (high && zValue > settings.zLimit) {
      zSev = zValue > settings.zCritical ? 'critical' : 'warning';
    } else if (low && zValue < -settings.zLimit) {
      zSev = zValue < -settings.zCritical ? 'critical' : 'warning';
      zReason = 'z_low';
    }
  }

  if (fenceSev !== null || zSev !== null) {
    if (settings.trigger === 'both') {
      if (fenceSev !== null && zSev !== null) {
        // Both must agree: the alert takes the level both reached.
        const both: Severity = severityRank(fenceSev) <= severityRank(zSev) ? fenceSev : zSev;
        flags ??= new Flags();
        flags.add(fenceReason, both);
        flags.add(zReason, both);
      }
    } else {
      if (fenceSev !== null && settings.trigger !== 'z') (flags ??= new Flags()).add(fenceReason, fenceSev);
      if (zSev !== null && settings.trigger !== 'fence') (flags ??= new Flags()).add(zReason, zSev);
    }
  }

  if (baseline.iqr === 0 && baseline.stdDev === 0 && value !== baseline.median) {
    if ((high && value > baseline.median) || (low && value < baseline.median))
      (flags ??= new Flags()).add('departs_constant', 'warning');
  }
  if (
    settings.flatlineAfter > 0 &&
    stuckRun >= settings.flatlineAfter &&
    (baseline.iqr > 0 || baseline.stdDev > 0)
  ) {
    (flags ??= new Flags()).add('flatline', 'warning');
  }

  if (flags === null && fenceSev === null && zSev === null) return NORMAL_WARM;
  return {
    evaluated: true,
    flagged: flags !== null,
    severity: flags === null ? null : flags.severity,
    reasons: flags === null ? [] : flags.reasons,
    fenceHit: fenceSev !== null,
    outerHit: fenceSev === 'critical',
    zHit: zSev !== null,
  };
}

/**
 * Whether an unflagged reading is back inside the fence and z rules by the deadband (in units of
 * the baseline's spread: `deadband` IQRs inside the inner fences, `deadband` standard deviations
 * inside the z limit), for the rules `trigger` uses; a rule with zero spread does not apply.
 * Always true without a deadband or a warm baseline. A raised alert clears only on settled
 * readings, so a value hovering just inside a limit keeps its alert instead of clearing and
 * raising again.
 */
export function settled(
  value: number,
  settings: SensorSettings,
  baseline: Baseline | null,
  fences: Fences | null,
): boolean {
  const margin = settings.deadband;
  if (margin === 0 || baseline === null || fences === null || baseline.count < settings.minSamples)
    return true;
  const high = settings.direction !== 'low';
  const low = settings.direction !== 'high';
  const band = margin * baseline.iqr;
  const insideFence =
    baseline.iqr === 0 || ((!high || value <= fences.upper - band) && (!low || value >= fences.lower + band));
  const limit = settings.zLimit - margin;
  const zValue = baseline.stdDev > 0 ? (value - baseline.mean) / baseline.stdDev : 0;
  const insideZ = (!high || zValue <= limit) && (!low || zValue >= -limit);
  switch (settings.trigger) {
    case 'fence':
      return insideFence;
    case 'z':
      return insideZ;
    case 'either':
      return insideFence && insideZ;
    case 'both':
      // Flagged only when both rules fire, so either rule back inside by the margin settles it.
      return insideFence || insideZ;
  }
}
