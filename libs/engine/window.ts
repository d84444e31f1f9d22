/**
 * The rolling event-time window of one sensor.
 *
 * The window (default 24 h) is split into `buckets` equal buckets aligned to the epoch. Readings
 * fill the open bucket; when event time enters a later bucket the open one closes (its digest is
 * compressed and frozen) and buckets that fell out of the window are dropped.
 *
 * Baseline definition: a reading is judged against the closed buckets covering the `window`
 * that ends where the open bucket starts. The open bucket is never part of the baseline, so a
 * reading is never judged against a baseline containing itself, and the baseline changes only
 * when a bucket closes (which is what makes per-reading judgement cheap).
 */
import { addValue, emptyMoments, mergeMoments, sampleStdDev, type Moments } from '../stats/moments.js';
import {
  compressPackedToBins,
  compressToBins,
  FrozenDigest,
  OpenDigest,
  packCentroids,
  type PackedCentroids,
  type OpenDigestSnapshot,
} from '../stats/digest.js';
import { closedBins, openBins, SKETCH } from './sketch-params.js';

/** A closed bucket of the window: its moments, time span and frozen centroids. */
export interface ClosedBucket {
  index: number;
  moments: Moments;
  firstTs: number;
  lastTs: number;
  centroids: PackedCentroids;
}

/** Summary of the closed buckets; built at the first baseline() call after a roll. */
export interface Baseline {
  digest: FrozenDigest;
  count: number;
  mean: number;
  stdDev: number;
  q1: number;
  median: number;
  q3: number;
  iqr: number;
  from: number;
  to: number;
}

/** Everything a window holds, as the state encoding stores it (see sensor-state.ts). */
export interface WindowSnapshot {
  windowMs: number;
  buckets: number;
  newestTs: number;
  openIndex: number;
  /** Mean and variance of the open bucket. */
  openMoments: Moments;
  openFirstTs: number;
  openLastTs: number;
  /** Digest of the open bucket (never part of the baseline). */
  open: OpenDigestSnapshot;
  /** Closed buckets inside the window, oldest first: the baseline. */
  closed: ClosedBucket[];
}

/**
 * The rolling event-time window of one sensor: the open bucket being filled, the closed buckets
 * of the last `windowMs`, and the baseline built from the closed ones.
 *
 * @example
 * const window = new SensorWindow(24 * 3600_000, 24);
 * window.advance(ts); // rolls buckets when ts enters a later one
 * const baseline = window.baseline(); // judge against this, then:
 * window.add(ts, value);
 */
export class SensorWindow {
  /** Width of one bucket in milliseconds. */
  readonly bucketMs: number;
  /** Index (ts / bucketMs) of the open bucket; -1 before the first reading. */
  openIndex = -1;
  /** Digest of the open bucket (never part of the baseline). */
  open: OpenDigest;
  /** Mean and variance of the open bucket. */
  openMoments: Moments = emptyMoments();
  /** Time of the open bucket's first reading. */
  openFirstTs = 0;
  /** Time of the open bucket's newest reading. */
  openLastTs = 0;
  /** Closed buckets inside the window, oldest first: the baseline. */
  closed: ClosedBucket[] = [];
  /** Newest event time seen (for lateness). */
  newestTs = -1;
  private cached: Baseline | null = null;
  /** True when buckets changed since `cached` was built (built at the next baseline() call). */
  private stale = false;

  constructor(
    readonly windowMs: number,
    readonly buckets: number,
  ) {
    this.bucketMs = windowMs / buckets;
    this.open = new OpenDigest(openBins(buckets), SKETCH.openCap);
  }

  /**
   * The window a snapshot describes, baseline rebuilt. A snapshot of another shape (the sensor's
   * window or bucket count changed in the config since) cannot be re-bucketed: the window starts
   * empty at `windowMs`/`buckets` and keeps only the newest event time, so lateness still holds.
   */
  static restore(windowMs: number, buckets: number, saved: WindowSnapshot): SensorWindow {
    const window = new SensorWindow(windowMs, buckets);
    window.newestTs = saved.newestTs;
    if (saved.windowMs !== windowMs || saved.buckets !== buckets) return window;
    window.openIndex = saved.openIndex;
    window.openMoments = saved.openMoments;
    window.openFirstTs = saved.openFirstTs;
    window.openLastTs = saved.openLastTs;
    window.open = OpenDigest.restore(saved.open, openBins(buckets), SKETCH.openCap);
    window.closed = saved.closed;
    window.stale = true;
    return window;
  }

  /** True when ts is older than the window relative to the newest reading. */
  isLate(ts: number): boolean {
    return this.newestTs >= 0 && ts < this.newestTs - this.windowMs;
  }

  /** Move event time forward to ts, rolling buckets as needed. Call before judging. */
  advance(ts: number): void {
    if (ts > this.newestTs) this.newestTs = ts;
    const bucketIndex = Math.floor(ts / this.bucketMs);
    if (this.openIndex < 0) {
      this.openIndex = bucketIndex;
      return;
    }
    if (bucketIndex > this.openIndex) this.roll(bucketIndex);
  }

  /** Add a reading to the open bucket. Out-of-order readings whose bucket has closed count here too. */
  add(ts: number, value: number): void {
    if (this.openMoments.n === 0) {
      this.openFirstTs = ts;
      this.openLastTs = ts;
    } else {
      if (ts < this.openFirstTs) this.openFirstTs = ts;
      if (ts > this.openLastTs) this.openLastTs = ts;
    }
    addValue(this.openMoments, value);
    this.open.push(value);
  }

  /**
   * The baseline readings are judged against: closed buckets only; null before the first roll.
   * Built when first asked for after a roll: a profiled sensor judged by its profile never asks,
   * so it never pays for the merge.
   */
  baseline(): Baseline | null {
    if (this.stale) this.rebuildBaseline();
    return this.cached;
  }

  private roll(bucketIndex: number): void {
    if (this.openMoments.n > 0) {
      this.closed.push({
        index: this.openIndex,
        moments: this.openMoments,
        firstTs: this.openFirstTs,
        lastTs: this.openLastTs,
        centroids: packCentroids(compressToBins([this.open.centroids()], closedBins(this.buckets))),
      });
      this.open.reset();
      this.openMoments = emptyMoments();
    }
    this.openIndex = bucketIndex;
    const oldest = bucketIndex - this.buckets;
    let expired = 0;
    while (expired < this.closed.length && this.closed[expired].index < oldest) expired++;
    if (expired > 0) this.closed.splice(0, expired);
    this.cached = null;
    this.stale = true;
  }

  /** Recompute the cached baseline from the closed buckets (also used after restoring state). */
  rebuildBaseline(): void {
    this.stale = false;
    if (this.closed.length === 0) {
      this.cached = null;
      return;
    }
    let moments = emptyMoments();
    let from = Infinity;
    let to = -Infinity;
    for (const bucket of this.closed) {
      moments = mergeMoments(moments, bucket.moments);
      if (bucket.firstTs < from) from = bucket.firstTs;
      if (bucket.lastTs > to) to = bucket.lastTs;
    }
    const digest = new FrozenDigest(
      compressPackedToBins(
        this.closed.map((bucket) => bucket.centroids),
        SKETCH.baselineBins,
      ),
    );
    const q1 = digest.quantile(0.25);
    const q3 = digest.quantile(0.75);
    this.cached = {
      digest,
      count: moments.n,
      mean: moments.mean,
      stdDev: sampleStdDev(moments),
      q1,
      median: digest.quantile(0.5),
      q3,
      iqr: q3 - q1,
      from,
      to,
    };
  }
}
