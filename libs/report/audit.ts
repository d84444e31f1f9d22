/**
 * Sketch audit: for a few sensors, keep the exact readings the engine put into each window bucket
 * and compare the baseline digest's quartiles with exact quartiles over exactly the same readings.
 *
 * Alignment: the mirror files each reading under the bucket the engine actually added it to (the
 * window's open bucket index right after processing), not under the bucket its timestamp points
 * to. Out-of-order readings land in the open bucket in the engine too, so the exact sample equals
 * the digest's input even for out-of-order data; the baseline is then the union of the buckets
 * listed in `window.closed`.
 */
import { quantileType7, rankRangeError } from '../stats/quantiles.js';

/** Sample choice: 32-bit FNV-1a of the sensor id (stable across runs and machines). */
export function sensorHash(id: string): number {
  let hash = 0x811c9dc5;
  for (let i = 0; i < id.length; i++) {
    hash ^= id.charCodeAt(i);
    hash = Math.imul(hash, 0x01000193) >>> 0;
  }
  return hash >>> 0;
}

/**
 * Keeps the `size` sensors with the smallest hash among those seen. A sensor is admitted on its
 * first reading, so every audited sensor is mirrored from its very first reading; a sensor pushed
 * out by a smaller hash is dropped. The final set is the `size` smallest hashes overall.
 */
export class AuditSample<T> {
  private readonly members = new Map<string, { hash: number; data: T }>();
  private readonly seen = new Set<string>();
  private maxHash = -1;

  constructor(
    readonly size: number,
    private readonly make: (sensor: string) => T,
  ) {}

  /** The sensor's mirror when it is in the sample, else undefined. Call on every reading. */
  get(sensor: string): T | undefined {
    const member = this.members.get(sensor);
    if (member !== undefined) return member.data;
    if (this.size <= 0 || this.seen.has(sensor)) return undefined;
    this.seen.add(sensor);
    const hash = sensorHash(sensor);
    if (this.members.size >= this.size) {
      if (hash >= this.maxHash) return undefined;
      let worst = '';
      for (const [heldSensor, heldMember] of this.members)
        if (heldMember.hash === this.maxHash) worst = heldSensor;
      this.members.delete(worst);
    }
    const data = this.make(sensor);
    this.members.set(sensor, { hash, data });
    this.maxHash = Math.max(...[...this.members.values()].map((v) => v.hash));
    return data;
  }

  /** The sampled sensors and their data, by hash then id. */
  entries(): [string, T][] {
    return [...this.members]
      .sort((a, b) => a[1].hash - b[1].hash || (a[0] < b[0] ? -1 : 1))
      .map(([k, v]) => [k, v.data]);
  }
}

/** Exact readings per window bucket index for one sensor, bounded by `cap` values in total. */
export class BucketMirror {
  private readonly buckets = new Map<number, number[]>();
  private held = 0;
  /** Set once a reading could not be kept because of the cap: the comparison is then skipped. */
  overflowed = false;

  constructor(readonly cap: number) {}

  /** Readings held. */
  get size(): number {
    return this.held;
  }

  /** Files a reading under a bucket; sets `overflowed` instead when the cap is reached. */
  add(bucketIndex: number, value: number): void {
    if (this.held >= this.cap) {
      this.overflowed = true;
      return;
    }
    let bucket = this.buckets.get(bucketIndex);
    if (bucket === undefined) {
      bucket = [];
      this.buckets.set(bucketIndex, bucket);
    }
    bucket.push(value);
    this.held++;
  }

  /** Drop buckets older than the window, as the engine does at each roll. */
  prune(openIndex: number, bucketCount: number): void {
    const oldest = openIndex - bucketCount;
    for (const [bucketIndex, bucket] of this.buckets) {
      if (bucketIndex < oldest) {
        this.held -= bucket.length;
        this.buckets.delete(bucketIndex);
      }
    }
  }

  /** Sorted union of the given buckets' readings. */
  sortedUnion(indexes: readonly number[]): Float64Array {
    let total = 0;
    for (const bucketIndex of indexes) total += this.buckets.get(bucketIndex)?.length ?? 0;
    const out = new Float64Array(total);
    let filled = 0;
    for (const bucketIndex of indexes)
      for (const value of this.buckets.get(bucketIndex) ?? []) out[filled++] = value;
    return out.sort();
  }
}

/** One quantile of the sketch audit: the digest's answer against the exact quantile. */
export interface QuantileCheck {
  p: number;
  /** The digest's answer. */
  digest: number;
  /** Exact quantile of the same readings (Hyndman-Fan type 7). */
  exact: number;
  /** digest - exact, in the sensor's units. */
  diff: number;
  /**
   * How far p lies outside the exact rank range of the digest's answer (0.01 = 1 percentile point;
   * positive when the answer ranks above p); an answer between two data values gets the range of
   * the values either side, so repeated values (rounded readings) are not counted as misses.
   */
  rankError: number;
}

/** The sketch audit of one sensor's baseline: quartiles and median, digest against exact. */
export interface AuditRow {
  sensor: string;
  /** Readings in the baseline (the closed buckets). */
  count: number;
  q1: QuantileCheck;
  median: QuantileCheck;
  q3: QuantileCheck;
}

/** Compare the digest's `probability`-quantile with the exact one of the same sorted readings. */
export function checkQuantile(sorted: Float64Array, probability: number, digest: number): QuantileCheck {
  const exact = quantileType7(sorted, probability);
  return {
    p: probability,
    digest,
    exact,
    diff: digest - exact,
    rankError: rankRangeError(sorted, digest, probability, true),
  };
}

/** The audit row of one sensor from its sorted baseline readings and the digest's quartiles. */
export function auditRow(
  sensor: string,
  sorted: Float64Array,
  digest: { q1: number; median: number; q3: number },
): AuditRow {
  return {
    sensor,
    count: sorted.length,
    q1: checkQuantile(sorted, 0.25, digest.q1),
    median: checkQuantile(sorted, 0.5, digest.median),
    q3: checkQuantile(sorted, 0.75, digest.q3),
  };
}
