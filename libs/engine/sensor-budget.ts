/** The sensor limit: how many sensors one process holds state for, and what that costs. */
/**
 * Memory to budget per sensor at the limit: heap plus typed-array bytes of one sensor with a full
 * default window (24 h, 12 buckets), measured by `npm run bench -- sensor-memory` on 2026-12-03:
 * 8.5 KB at one reading a minute, 37.1 KB at one every 10 s (27.8-32.0 KB in earlier runs: the
 * 300-sensor sample is small), 1.0 KB for a sensor with a single reading. 40 KiB covers every
 * rate up to one every 10 s; sensors read faster take more, so lower the limit for such plants.
 */
export const HEAP_BYTES_PER_SENSOR = 40_960;
/** Default sensor limit of one monitor process or replay: about 2.0 GiB at the budget above. */
export const DEFAULT_MAX_SENSORS = 50_000;
/**
 * Places in the limit one sensor with `profile: daily` takes: its heap after 8 days
 * (`profileDays` 7, one reading a minute) measured by `npm run bench -- profile` on 2026-12-03
 * was about 88 KB (61 KB of it the profile); at one reading every 10 s about 98 KB (derived: the
 * window's 37.1 KB plus the profile's part, which does not grow with the rate since each slot
 * entry keeps at most 48 centroids), so three budgets of 40 KiB cover it.
 */
export const PROFILED_SENSOR_WEIGHT = 3;

/** Places in the limit a sensor takes: PROFILED_SENSOR_WEIGHT with a daily profile, else 1. */
export function sensorWeight(profiled: boolean): number {
  return profiled ? PROFILED_SENSOR_WEIGHT : 1;
}

/**
 * A cap on how many sensors may hold state at once, shared by every Engine of one process (the
 * monitor runs one engine per partition). Bounded memory is a promise of the process, so the count
 * is too: a producer that puts a counter into the sensor id cannot grow memory past the cap. The
 * count is weighted (sensorWeight): a profiled sensor takes the places its memory needs, so the
 * limit's memory budget holds whatever mix of sensors a plant has.
 */
export class SensorBudget {
  private held = 0;

  constructor(
    /** Places (sensorWeight each) allowed at once; new sensors beyond it are rejected with reason `sensor_limit`. */
    readonly limit: number,
  ) {
    if (!Number.isInteger(limit) || limit < 1)
      throw new RangeError(`sensor limit must be a whole number >= 1, got ${limit}`);
  }

  /** Places taken now (sensors holding state, each by its weight). */
  get used(): number {
    return this.held;
  }

  /** Reserve `weight` places for one new sensor; false when they would pass the cap. */
  tryTake(weight = 1): boolean {
    if (this.held + weight > this.limit) return false;
    this.held += weight;
    return true;
  }

  /** Give back places of sensors whose state was dropped. */
  release(count = 1): void {
    this.held = Math.max(0, this.held - count);
  }

  /** Account for places taken without tryTake (state restored from a checkpoint). */
  add(count: number): void {
    this.held += count;
  }
}
