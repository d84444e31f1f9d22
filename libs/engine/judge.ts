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

export const NORMAL_COLD: Verdict = Object.freeze({
  evaluated: false,
  flagged: false,
  severity: null,
  reasons: [] as Reason[],
  fenceHit: false,
  outerHit: false,
  zHit: false,
}) as Verdict;

export const NORMAL_WARM: Verdict = Object.freeze({ ...NORMAL_COLD, evaluated: true }) as Verdict;

/** Fences derived from a baseline and the sensor's multipliers. */
export interface Fences {
  lower: number;
  upper: number;
  lowerOuter: number;
  upperOuter: number;
}

export function fencesOf(
  b: Pick<Baseline, 'q1' | 'q3' | 'iqr'>,
  s: Pick<SensorSettings, 'fenceK' | 'outerK'>,
): Fences {
  return {
    lower: b.q1 - s.fenceK * b.iqr,
    upper: b.q3 + s.fenceK * b.iqr,
    lowerOuter: b.q1 - s.outerK * b.iqr,
    upperOuter: b.q3 + s.outerK * b.iqr,
  };
}

/** z, or null when the baseline has no spread. */
export function zScore(x: number, b: Baseline): number | null {
  return b.stdDev > 0 ? (x - b.mean) / b.stdDev : null;
}

/** Robust z from median and IQR (sigma ~ IQR / 1.349 for normal data), or null when IQR is 0. */
export function robustZ(x: number, b: Baseline): number | null {
  return b.iqr > 0 ? ((x - b.median) * 1.349) / b.iqr : null;
}

/** Collects reasons and the highest severity; allocated only for readings that are flagged. */
class Flags {
  reasons: Reason[] = [];
  severity: Severity | null = null;
  add(r: Reason, sev: Severity): void {
    this.reasons.push(r);
    if (severityRank(sev) > severityRank(this.severity)) this.severity = sev;
  }
}

export function judge(
  x: number,
  s: SensorSettings,
  b: Baseline | null,
  f: Fences | null,
  stuckRun: number,
): Verdict {
  let flags: Flags | null = null;
  const high = s.direction !== 'low';
  const low = s.direction !== 'high';

  // Physical limits need no baseline and ignore `direction`: they are explicit.
  if (s.max !== null && x > s.max) (flags ??= new Flags()).add('limit_high', 'critical');
  if (s.min !== null && x < s.min) (flags ??= new Flags()).add('limit_low', 'critical');

  if (b === null || f === null || b.count < s.minSamples) {
    return flags === null
      ? NORMAL_COLD
      : { ...NORMAL_COLD, flagged: true, severity: flags.severity, reasons: flags.reasons };
  }

  // Fence rule.
  let fenceSev: Severity | null = null;
  let fenceReason: Reason = 'fence_high';
  if (b.iqr > 0) {
    if (high && x > f.upper) {
      fenceSev = x > f.upperOuter ? 'critical' : 'warning';
      fenceReason = x > f.upperOuter ? 'outer_fence_high' : 'fence_high';
    } else if (low && x < f.lower) {
      fenceSev = x < f.lowerOuter ? 'critical' : 'warning';
      fenceReason = x < f.lowerOuter ? 'outer_fence_low' : 'fence_low';
    }
  }
  // z rule.
  let zSev: Severity | null = null;
  let zReason: Reason = 'z_high';
  if (b.stdDev > 0) {
    const z = (x - b.mean) / b.stdDev;
    if (high && z > s.zLimit) {
      zSev = z > s.zCritical ? 'critical' : 'warning';
    } else if (low && z < -s.zLimit) {
      zSev = z < -s.zCritical ? 'critical' : 'warning';
      zReason = 'z_low';
    }
  }

  if (fenceSev !== null || zSev !== null) {
    if (s.trigger === 'both') {
      if (fenceSev !== null && zSev !== null) {
        // Both must agree: the alert takes the level both reached.
        const both: Severity = severityRank(fenceSev) <= severityRank(zSev) ? fenceSev : zSev;
        flags ??= new Flags();
        flags.add(fenceReason, both);
        flags.add(zReason, both);
      }
    } else {
      if (fenceSev !== null && s.trigger !== 'z') (flags ??= new Flags()).add(fenceReason, fenceSev);
      if (zSev !== null && s.trigger !== 'fence') (flags ??= new Flags()).add(zReason, zSev);
    }
  }

  if (b.iqr === 0 && b.stdDev === 0 && x !== b.median) {
    if ((high && x > b.median) || (low && x < b.median))
      (flags ??= new Flags()).add('departs_constant', 'warning');
  }
  if (s.flatlineAfter > 0 && stuckRun >= s.flatlineAfter && (b.iqr > 0 || b.stdDev > 0)) {
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
