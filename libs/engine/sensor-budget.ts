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
 * A cap on how many sensors may hold state at once, shared by every Engine of one process (the
 * monitor runs one engine per partition). Bounded memory is a promise of the process, so the count
 * is too: a producer that puts a counter into the sensor id cannot grow memory past the cap.
 */
export class SensorBudget {
  private held = 0;

  constructor(
    /** Sensors allowed at once; new ones beyond it are rejected with reason `sensor_limit`. */
    readonly limit: number,
  ) {
    if (!Number.isInteger(limit) || limit < 1)
      throw new RangeError(`sensor limit must be a whole number >= 1, got ${limit}`);
  }

  /** Sensors holding state now. */
  get used(): number {
    return this.held;
  }

  /** Reserve room for one new sensor; false when the cap is reached. */
  tryTake(): boolean {
    if (this.held >= this.limit) return false;
    this.held++;
    return true;
  }

  /** Give back room for sensors whose state was dropped. */
  release(count = 1): void {
    this.held = Math.max(0, this.held - count);
  }

  /** Account for sensors installed without tryTake (state restored from a checkpoint). */
  add(count: number): void {
    this.held += count;
  }
}
