/**
 * How much input history rebuilds every sensor's baseline exactly: what a state rebuild after a
 * loss, and a warm start, re-read before the point where judging resumes.
 */
import type { EngineConfig } from './config.js';
import type { SensorSettings } from './settings.js';

const DAY_MS = 24 * 3600 * 1000;

/**
 * The history one sensor's settings need: the window plus one bucket (the baseline is the closed
 * buckets of the window, and the oldest of them starts up to a bucket before the window does), or,
 * with `profile: daily`, profileDays + 2 days (the previous profileDays local days, today, and a
 * day of slack for time-zone offsets and daylight saving), whichever is longer.
 */
export function historyNeededFor(settings: SensorSettings): number {
  const rolling = settings.window + settings.window / settings.buckets;
  const daily = settings.profile === 'daily' ? (settings.profileDays + 2) * DAY_MS : 0;
  return Math.max(rolling, daily);
}

/**
 * The longest history any sensor of the config needs: the defaults and every `sensors` rule
 * (merged over the defaults, as the engine resolves them), in milliseconds.
 *
 * @example
 * historyNeeded(validateConfig({ defaults: { window: '12h', buckets: 12 } })); // 13 h in ms
 */
export function historyNeeded(config: EngineConfig): number {
  let longest = historyNeededFor(config.defaults);
  for (const rule of config.sensors)
    longest = Math.max(longest, historyNeededFor({ ...config.defaults, ...rule.overrides }));
  return longest;
}
