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

const MIB = 2 ** 20;

/**
 * Memory of a monitor process before its sensors: an idle `streamfence run` (connected, partitions
 * assigned, no readings) measured 80 MB resident, 32 MB of it V8 heap (2026-12-03, metrics
 * endpoint); the rest of the 256 MiB is for the batches in flight (fetched messages, the outbox of
 * alerts and rejects, a checkpoint's encoded states).
 */
export const PROCESS_BASE_BYTES = 256 * MIB;
/**
 * Part of PROCESS_BASE_BYTES outside the V8 heap: Node's code and stacks and the Kafka socket and
 * fetch buffers (48 MB resident beyond the heap when idle, measured as above).
 */
export const OUTSIDE_HEAP_BYTES = 128 * MIB;
/** Headroom on the sensors' bytes for garbage not yet collected (common practice, not measured). */
export const GC_SLACK = 1.25;

/** What one monitor process or replay at its sensor limit should stay under, in whole MiB. */
export interface ProcessMemoryBudget {
  /** Resident memory: the container's memory request and limit (`deploy/k8s/monitor.yaml`). */
  memoryMiB: number;
  /** V8 heap cap (`--max-old-space-size`): the memory less OUTSIDE_HEAP_BYTES. */
  heapMiB: number;
}

/**
 * The memory budget of a process holding `maxSensors` places: PROCESS_BASE_BYTES plus every place
 * at HEAP_BYTES_PER_SENSOR with GC_SLACK, rounded up to a MiB. The heap cap leaves the sensors'
 * whole share inside the heap: a sensor's bytes are heap (about 1 KB for a sensor with one reading)
 * or typed arrays outside it (most of a full window), never both in full, so heap plus the rest stay
 * within the memory figure.
 */
export function processMemoryBudget(
  maxSensors: number,
  bytesPerPlace = HEAP_BYTES_PER_SENSOR,
): ProcessMemoryBudget {
  if (!Number.isInteger(maxSensors) || maxSensors < 1)
    throw new RangeError(`sensor limit must be a whole number >= 1, got ${maxSensors}`);
  const memoryMiB = Math.ceil((PROCESS_BASE_BYTES + maxSensors * bytesPerPlace * GC_SLACK) / MIB);
  return { memoryMiB, heapMiB: memoryMiB - OUTSIDE_HEAP_BYTES / MIB };
}

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
