/**
 * The alert vocabulary, defined once: severities and their order, the reasons a reading is
 * flagged (with the plain words an operator reads), the lifecycle states of an alert, and the
 * alert-budget and flood defaults. Every other module imports these; none spells them out again.
 */

/** Severities, mildest first. The array order is the severity order. */
export const SEVERITIES = ['warning', 'critical'] as const;

/** How serious a flagged reading or an alert is. */
export type Severity = (typeof SEVERITIES)[number];

const SEVERITY_RANK: Readonly<Record<Severity, number>> = { warning: 1, critical: 2 };

/**
 * A number that orders severities: 0 for none, higher for more severe.
 *
 * @example severityRank('critical') > severityRank('warning') // true
 */
export function severityRank(severity: Severity | null): number {
  return severity === null ? 0 : SEVERITY_RANK[severity];
}

/** True when `value` is one of {@link SEVERITIES}. */
export function isSeverity(value: unknown): value is Severity {
  return typeof value === 'string' && Object.hasOwn(SEVERITY_RANK, value);
}

/**
 * Why a reading was flagged, in the order the rules are checked, then the conditions of the
 * sensor itself (readings of doubtful quality, no readings at all), which have alerts of their own.
 */
export const REASONS = [
  'fence_high',
  'fence_low',
  'outer_fence_high',
  'outer_fence_low',
  'z_high',
  'z_low',
  'limit_high',
  'limit_low',
  'flatline',
  'departs_constant',
  'bad_quality',
  'stale',
] as const;

/** One reason a reading was flagged (carried in `AlertEvent.reasons`). */
export type Reason = (typeof REASONS)[number];

/** The plain words for each reason, as they appear in an alert's message. */
export const REASON_WORDS: Readonly<Record<Reason, string>> = {
  fence_high: 'above the upper fence',
  fence_low: 'below the lower fence',
  outer_fence_high: 'above the outer upper fence',
  outer_fence_low: 'below the outer lower fence',
  z_high: 'unusually high for this sensor',
  z_low: 'unusually low for this sensor',
  limit_high: 'above its physical maximum',
  limit_low: 'below its physical minimum',
  flatline: 'stuck on one value',
  departs_constant: 'off the constant value it held for the whole window',
  bad_quality: 'sending readings of doubtful quality',
  stale: 'silent',
};

/** True when `value` is one of {@link REASONS}. */
export function isReason(value: unknown): value is Reason {
  return typeof value === 'string' && Object.hasOwn(REASON_WORDS, value);
}

/** The lifecycle transitions an alert event reports. */
export const ALERT_STATES = ['raised', 'updated', 'cleared'] as const;

/** The lifecycle transition one alert event reports. */
export type AlertState = (typeof ALERT_STATES)[number];

/**
 * Raised alerts per hour one operator can handle: the default budget for the board's rate meter,
 * the replay report and tuning. Common practice in alarm-management guidance (ANSI/ISA-18.2 and
 * EEMUA 191 use figures of this order); a setting, not a law.
 */
export const ALERT_BUDGET_PER_HOUR = 6;

/** The window a flood is counted over: 10 minutes. */
export const FLOOD_WINDOW_MS = 600_000;

/**
 * More than this many alerts raised within FLOOD_WINDOW_MS is a flood (11 or more; exactly 10 is
 * not). An alarm-management convention of the same guidance; common practice.
 */
export const FLOOD_LIMIT = 10;
