/**
 * Invented test feeds for the report tests: a few sensors on an imaginary cooling loop, normal
 * noise with planted spikes and one level step, generated from a seed so every run is identical.
 */
import { parseJsonReading, type Reading } from '../../../libs/engine/reading.js';
import type { InputRecord } from '../../../services/replay/input.js';

/** mulberry32: small seeded generator for test data. */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export function normal(r: () => number): number {
  const u = 1 - r();
  const v = r();
  return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v);
}

export interface FeedOptions {
  sensors: string[];
  start: number;
  intervalMs: number;
  count: number;
  seed: number;
  /** Share of readings replaced by a spike of +/- 9 sd. */
  spikeRate?: number;
  /** From this reading index on, sensors[0] shifts up by 6 sd. */
  stepAt?: number;
}

/** Readings interleaved across sensors in time order. */
export function feed(o: FeedOptions): Reading[] {
  const r = rng(o.seed);
  const out: Reading[] = [];
  for (let i = 0; i < o.count; i++) {
    const ts = o.start + i * o.intervalMs;
    o.sensors.forEach((sensor, k) => {
      const mean = 50 + 10 * k;
      const sd = 1 + k * 0.5;
      let value = mean + sd * normal(r);
      if (o.spikeRate && r() < o.spikeRate) value = mean + (r() < 0.5 ? -9 : 9) * sd;
      if (k === 0 && o.stepAt !== undefined && i >= o.stepAt) value += 6 * sd;
      out.push({ sensor, ts, value: Math.round(value * 1000) / 1000 });
    });
  }
  return out;
}

export function toLine(x: Reading): string {
  return JSON.stringify({ sensor: x.sensor, ts: new Date(x.ts).toISOString(), value: x.value });
}

/** The readings as replay input records (one batch per 4096). */
export async function* asRecords(readings: readonly Reading[]): AsyncGenerator<InputRecord[]> {
  for (let i = 0; i < readings.length; i += 4096) {
    yield readings.slice(i, i + 4096).map((x, j) => {
      const raw = toLine(x);
      return { line: i + j + 1, raw, result: parseJsonReading(raw) };
    });
  }
}

/** A short window so judgement starts after minutes, not a day. */
export const SHORT_WINDOW_CONFIG = { defaults: { window: '10m', buckets: 10, minSamples: 30 } };
