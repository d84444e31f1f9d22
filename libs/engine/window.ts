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
  compressToBins,
  FrozenDigest,
  OpenDigest,
  roundForStorage,
  type Centroids,
} from '../stats/digest.js';
import { closedBins, openBins, SKETCH } from './sketch-params.js';

export interface ClosedBucket {
  index: number;
  moments: Moments;
  firstTs: number;
  lastTs: number;
  centroids: Centroids;
}

/** Summary of the closed buckets; rebuilt at each roll. */
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

export class SensorWindow {
  readonly bucketMs: number;
  /** Index (ts / bucketMs) of the open bucket; -1 before the first reading. */
  openIndex = -1;
  open: OpenDigest;
  openMoments: Moments = emptyMoments();
  openFirstTs = 0;
  openLastTs = 0;
  closed: ClosedBucket[] = [];
  /** Newest event time seen (for lateness). */
  newestTs = -1;
  private cached: Baseline | null = null;

  constructor(
    readonly windowMs: number,
    readonly buckets: number,
  ) {
    this.bucketMs = windowMs / buckets;
    this.open = new OpenDigest(openBins(buckets), SKETCH.openCap);
  }

  /** True when ts is older than the window relative to the newest reading. */
  isLate(ts: number): boolean {
    return this.newestTs >= 0 && ts < this.newestTs - this.windowMs;
  }

  /** Move event time forward to ts, rolling buckets as needed. Call before judging. */
  advance(ts: number): void {
    if (ts > this.newestTs) this.newestTs = ts;
    const idx = Math.floor(ts / this.bucketMs);
    if (this.openIndex < 0) {
      this.openIndex = idx;
      return;
    }
    if (idx > this.openIndex) this.roll(idx);
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

  baseline(): Baseline | null {
    return this.cached;
  }

  private roll(idx: number): void {
    if (this.openMoments.n > 0) {
      this.closed.push({
        index: this.openIndex,
        moments: this.openMoments,
        firstTs: this.openFirstTs,
        lastTs: this.openLastTs,
        centroids: roundForStorage(compressToBins([this.open.centroids()], closedBins(this.buckets))),
      });
      this.open.reset();
      this.openMoments = emptyMoments();
    }
    this.openIndex = idx;
    const oldest = idx - this.buckets;
    let drop = 0;
    while (drop < this.closed.length && this.closed[drop].index < oldest) drop++;
    if (drop > 0) this.closed.splice(0, drop);
    this.rebuildBaseline();
  }

  /** Recompute the cached baseline from the closed buckets (also used after restoring state). */
  rebuildBaseline(): void {
    if (this.closed.length === 0) {
      this.cached = null;
      return;
    }
    let m = emptyMoments();
    let from = Infinity;
    let to = -Infinity;
    for (const b of this.closed) {
      m = mergeMoments(m, b.moments);
      if (b.firstTs < from) from = b.firstTs;
      if (b.lastTs > to) to = b.lastTs;
    }
    const digest = new FrozenDigest(
      compressToBins(
        this.closed.map((b) => b.centroids),
        SKETCH.baselineBins,
      ),
    );
    const q1 = digest.quantile(0.25);
    const q3 = digest.quantile(0.75);
    this.cached = {
      digest,
      count: m.n,
      mean: m.mean,
      stdDev: sampleStdDev(m),
      q1,
      median: digest.quantile(0.5),
      q3,
      iqr: q3 - q1,
      from,
      to,
    };
  }
}
