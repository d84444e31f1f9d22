/**
 * Per-sensor detection settings: the config keys, their defaults and their meaning.
 * One table drives validation, documentation and the effective config in summaries.
 */
/** Which rules raise a flag: the fences, the z limit, either of them or both together. */
export type Trigger = 'fence' | 'z' | 'either' | 'both';
/** Which side of normal is flagged. */
export type Direction = 'both' | 'high' | 'low';
/** What a reading is judged against: the rolling window alone, or the same local hour on previous days. */
export type Profile = 'none' | 'daily';

/** Everything that decides how one sensor is judged (the config keys; meanings in the README). */
export interface SensorSettings {
  /** Inner Tukey fence multiplier: Q1 - k*IQR, Q3 + k*IQR -> warning. */
  fenceK: number;
  /** Outer fence multiplier -> critical. Must exceed fenceK. */
  outerK: number;
  /** |z| above this -> warning. */
  zLimit: number;
  /** |z| above this -> critical. Must exceed zLimit. */
  zCritical: number;
  /** Which statistical rules flag a reading. */
  trigger: Trigger;
  /** Which side is abnormal for this sensor. */
  direction: Direction;
  /** Physical lower limit: a reading below it is critical (limit_low). */
  min: number | null;
  /** Physical upper limit: a reading above it is critical (limit_high). */
  max: number | null;
  /** Readings needed in the baseline before any statistical judgement. */
  minSamples: number;
  /** Identical consecutive readings that make a stuck sensor (0 turns the rule off). */
  flatlineAfter: number;
  /** Flagged readings among the last raiseWindow needed to raise an alert. */
  raiseAfter: number;
  raiseWindow: number;
  /** Consecutive unflagged readings needed to clear a raised alert. */
  clearAfter: number;
  /**
   * Clear margin in units of the baseline's spread: while an alert is raised, a reading counts
   * towards clearing only when it is inside the inner fences by `deadband` IQRs and within the z
   * limit by `deadband` standard deviations (the rules `trigger` uses). 0 = no margin.
   */
  deadband: number;
  /** Event time (ms) the clearing readings must span before a raised alert clears (0 = none). */
  clearDelay: number;
  /** Event time (ms) the raise rule must hold on every reading before an alert is raised (0 = none). */
  onDelay: number;
  /** Baseline window length in milliseconds (config accepts "24h", "90m", "3600s" or ms). */
  window: number;
  /** Number of buckets the window is split into; the window must divide evenly. */
  buckets: number;
  /** Whether readings taken while an alert is raised feed the baseline. */
  learnWhileRaised: boolean;
  /** Consecutive readings of quality other than good that raise a bad_quality alert (0 turns it off). */
  badQualityAfter: number;
  /**
   * Event time (ms) past a sensor's newest reading after which it is silent and raises a `stale`
   * alert; null turns the rule off. Config accepts a duration ("15m") or "off".
   */
  staleAfter: number | null;
  /** `daily`: judge against the same local hour on the previous profileDays days (see profile.ts). */
  profile: Profile;
  /** IANA time zone whose local hours the daily profile uses (shifts, daylight saving). */
  timeZone: string;
  /** Days of history a daily profile keeps and judges against. */
  profileDays: number;
}

/** The default value of every setting (the README's configuration table lists them). */
export const DEFAULT_SETTINGS: Readonly<SensorSettings> = Object.freeze({
  fenceK: 1.5,
  outerK: 3,
  zLimit: 3,
  zCritical: 5,
  trigger: 'either',
  direction: 'both',
  min: null,
  max: null,
  minSamples: 100,
  flatlineAfter: 60,
  raiseAfter: 1,
  raiseWindow: 1,
  clearAfter: 3,
  deadband: 0,
  clearDelay: 0,
  onDelay: 0,
  window: 24 * 3600 * 1000,
  buckets: 12,
  learnWhileRaised: true,
  badQualityAfter: 10,
  staleAfter: null,
  profile: 'none',
  timeZone: 'UTC',
  profileDays: 7,
});

/** The names of all settings, in the order of DEFAULT_SETTINGS. */
export const SETTING_KEYS = Object.keys(DEFAULT_SETTINGS) as (keyof SensorSettings)[];

/** Hard ceilings that keep per-sensor memory bounded whatever the config says. */
export const SETTING_BOUNDS = {
  maxBuckets: 48,
  maxRaiseWindow: 64,
  minWindowMs: 1000,
  maxWindowMs: 31 * 24 * 3600 * 1000,
  maxProfileDays: 31,
} as const;
