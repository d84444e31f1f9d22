/**
 * Readings held as columns (sensor index, ts, value, quality) instead of objects: compact, and
 * the typed arrays can sit on SharedArrayBuffers so tuning workers read one copy of the data.
 */
import type { DoubtfulQuality, Reading } from '../engine/reading.js';

/** Readings as columns: reading i is (names[sensor[i]], ts[i], value[i], quality[i]). */
export interface ReadingColumns {
  /** Sensor ids; `sensor[i]` indexes this table. */
  names: string[];
  sensor: Uint32Array;
  ts: Float64Array;
  value: Float64Array;
  /** QUALITY_CODES: 0 good, 1 uncertain, 2 bad. */
  quality: Uint8Array;
  count: number;
}

/** A reading's quality as a column code; index 0 (good) is a reading without a quality. */
const QUALITY_CODE: Readonly<Record<DoubtfulQuality, number>> = { uncertain: 1, bad: 2 };
const QUALITY_OF_CODE: readonly (DoubtfulQuality | undefined)[] = [undefined, 'uncertain', 'bad'];

/** Reading i of the columns, as the engine takes it. */
export function readingAt(columns: ReadingColumns, index: number): Reading {
  const quality = QUALITY_OF_CODE[columns.quality[index]];
  const sensor = columns.names[columns.sensor[index]];
  return quality === undefined
    ? { sensor, ts: columns.ts[index], value: columns.value[index] }
    : { sensor, ts: columns.ts[index], value: columns.value[index], quality };
}

/** Grows typed arrays by doubling while readings are appended; `finish` copies them to shared memory. */
export class ColumnBuilder {
  private readonly index = new Map<string, number>();
  /** Sensor ids by column index. */
  readonly names: string[] = [];
  private sensor = new Uint32Array(1024);
  private ts = new Float64Array(1024);
  private value = new Float64Array(1024);
  private quality = new Uint8Array(1024);
  /** Readings added. */
  count = 0;

  /** Appends one reading (quality only when not good). */
  add(sensor: string, ts: number, value: number, quality?: DoubtfulQuality): void {
    let id = this.index.get(sensor);
    if (id === undefined) {
      id = this.names.length;
      this.index.set(sensor, id);
      this.names.push(sensor);
    }
    if (this.count === this.ts.length) this.grow();
    this.sensor[this.count] = id;
    this.ts[this.count] = ts;
    this.value[this.count] = value;
    this.quality[this.count] = quality === undefined ? 0 : QUALITY_CODE[quality];
    this.count++;
  }

  private grow(): void {
    const size = this.ts.length * 2;
    this.sensor = copyInto(new Uint32Array(size), this.sensor);
    this.ts = copyInto(new Float64Array(size), this.ts);
    this.value = copyInto(new Float64Array(size), this.value);
    this.quality = copyInto(new Uint8Array(size), this.quality);
  }

  /** The columns, each on a SharedArrayBuffer of exactly `count` entries. */
  finish(): ReadingColumns {
    const count = this.count;
    const sensor = new Uint32Array(new SharedArrayBuffer(Math.max(1, count) * 4), 0, count);
    sensor.set(this.sensor.subarray(0, count));
    const ts = new Float64Array(new SharedArrayBuffer(Math.max(1, count) * 8), 0, count);
    ts.set(this.ts.subarray(0, count));
    const value = new Float64Array(new SharedArrayBuffer(Math.max(1, count) * 8), 0, count);
    value.set(this.value.subarray(0, count));
    const quality = new Uint8Array(new SharedArrayBuffer(Math.max(1, count)), 0, count);
    quality.set(this.quality.subarray(0, count));
    return { names: [...this.names], sensor, ts, value, quality, count };
  }
}

/** First and last reading time (the data span the alert rate is measured over). */
export function spanOf(columns: ReadingColumns): { first: number; last: number } {
  let first = Infinity;
  let last = -Infinity;
  for (let i = 0; i < columns.count; i++) {
    const ts = columns.ts[i];
    if (ts < first) first = ts;
    if (ts > last) last = ts;
  }
  return columns.count === 0 ? { first: 0, last: 0 } : { first, last };
}

/** `target` after copying `source` into its start. */
function copyInto<T extends Uint32Array | Float64Array | Uint8Array>(target: T, source: T): T {
  target.set(source);
  return target;
}

/** Intervals sampled per sensor for {@link medianReadingInterval} (bounds its memory and time). */
export const INTERVALS_PER_SENSOR = 100;

/**
 * The median time between consecutive readings of one sensor, over the first
 * {@link INTERVALS_PER_SENSOR} intervals of every sensor (positive gaps only: equal or
 * out-of-order times say nothing about the rate); null when no sensor read twice. The median of
 * an even count is the mean of the middle two.
 */
export function medianReadingInterval(columns: ReadingColumns): number | null {
  const previous = new Float64Array(columns.names.length).fill(NaN);
  const taken = new Uint32Array(columns.names.length);
  const gaps: number[] = [];
  for (let i = 0; i < columns.count; i++) {
    const sensor = columns.sensor[i];
    const gap = columns.ts[i] - previous[sensor];
    previous[sensor] = columns.ts[i];
    if (!(gap > 0) || taken[sensor] >= INTERVALS_PER_SENSOR) continue;
    taken[sensor]++;
    gaps.push(gap);
  }
  if (gaps.length === 0) return null;
  gaps.sort((a, b) => a - b);
  const mid = gaps.length >> 1;
  return gaps.length % 2 === 1 ? gaps[mid] : (gaps[mid - 1] + gaps[mid]) / 2;
}
