/**
 * Engine benchmark (the sketch design sweep is quartile-accuracy.bench.ts). All figures come from one run, against raw baselines
 * measured in the same run on the same pre-generated values:
 * - bare `tdigest` push rate (new TDigest(0.05), the package default K = 25, and K = 0, the
 *   engine's setting with automatic compression off) vs the engine's `process` rate on one
 *   sensor and on 1,000 sensors round-robin (event time steps so buckets roll);
 * - 10,000 sensors with default settings after a full window (1,000 readings each over 26 h):
 *   serialised state bytes per sensor, heap bytes per sensor (needs node --expose-gc), and the
 *   quartile rank error of their baselines (sampled sensors, against the exact closed-bucket data);
 */
import tdigest from 'tdigest';
import { validateConfig } from '../../libs/config/config.js';
import { Engine } from '../../libs/engine/engine.js';
import { SKETCH } from '../../libs/engine/sketch-params.js';
import type { SensorWindow } from '../../libs/engine/window.js';
import { exactRank } from '../../libs/stats/quantiles.js';
import { Rng } from '../unit/stats/random.js';

const HOUR = 3_600_000;
const T0 = Date.UTC(2026, 0, 5);

export function normals(n: number, seed: number): Float64Array {
  const r = new Rng(seed);
  const a = new Float64Array(n);
  for (let i = 0; i < n; i++) a[i] = 50 + 5 * r.normal();
  return a;
}

/** Best of three passes, each on fresh state: the first pass also pays for JIT compilation. */
function rate(n: number, f: () => void): number {
  let best = 0;
  for (let pass = 0; pass < 3; pass++) {
    gc();
    const t = performance.now();
    f();
    best = Math.max(best, n / ((performance.now() - t) / 1000));
  }
  return best;
}

function gc(): void {
  const g = (globalThis as { gc?: () => void }).gc;
  if (g) {
    g();
    g();
  }
}

export function throughput(values: Float64Array): Record<string, number> {
  const n = values.length;
  const bare = rate(n, () => {
    const d = new tdigest.TDigest(0.05);
    for (let i = 0; i < n; i++) d.push(values[i]);
  });
  const bareK0 = rate(n, () => {
    const d = new tdigest.TDigest(0.05, 0);
    for (let i = 0; i < n; i++) d.push(values[i]);
  });
  const step = (26 * HOUR) / n;
  const one = rate(n, () => {
    const e = new Engine(validateConfig({}));
    for (let i = 0; i < n; i++)
      e.process({ sensor: 'kiln-2/temp', ts: Math.round(T0 + i * step), value: values[i] });
  });
  const names = Array.from({ length: 1000 }, (_, i) => `unit-${i}/temp`);
  const many = rate(n, () => {
    const e = new Engine(validateConfig({}));
    for (let i = 0; i < n; i++)
      e.process({ sensor: names[i % 1000], ts: Math.round(T0 + i * step), value: values[i] });
  });
  return {
    readings: n,
    bareTdigestPushPerSec: Math.round(bare),
    bareTdigestK0PushPerSec: Math.round(bareK0),
    engineOneSensorPerSec: Math.round(one),
    engine1000SensorsPerSec: Math.round(many),
    ratioOneSensorToBare: +(one / bare).toFixed(3),
    ratioOneSensorToBareK0: +(one / bareK0).toFixed(3),
    ratio1000SensorsToBare: +(many / bare).toFixed(3),
  };
}

/** Worst and mean quartile rank error of a window's baseline against the exact closed-bucket data. */
function quartileErrors(w: SensorWindow, byBucket: Map<number, number[]>): number[] {
  const b = w.baseline();
  if (b === null) return [];
  const all: number[] = [];
  for (const c of w.closed) for (const v of byBucket.get(c.index) ?? []) all.push(v);
  const s = Float64Array.from(all).sort();
  return [
    Math.abs(exactRank(s, b.q1) - 0.25),
    Math.abs(exactRank(s, b.median) - 0.5),
    Math.abs(exactRank(s, b.q3) - 0.75),
  ];
}

export function fleet(sensors: number, perSensor: number): Record<string, unknown> {
  const step = (26 * HOUR) / perSensor;
  const names = Array.from({ length: sensors }, (_, i) => `cell-${Math.floor(i / 100)}/probe-${i % 100}`);
  gc();
  const before = process.memoryUsage().heapUsed;
  const e = new Engine(validateConfig({}));
  const rngs = names.map((_, i) => new Rng(1000 + i));
  const t = performance.now();
  for (let k = 0; k < perSensor; k++) {
    const ts = Math.round(T0 + k * step);
    for (let i = 0; i < sensors; i++) e.process({ sensor: names[i], ts, value: 20 + 2 * rngs[i].normal() });
  }
  const seconds = (performance.now() - t) / 1000;
  gc();
  const heap = process.memoryUsage().heapUsed - before;
  let sum = 0;
  let max = 0;
  for (const s of names) {
    const len = e.encode(s)!.length;
    sum += len;
    if (len > max) max = len;
  }
  // Rank error on sampled sensors: regenerate their streams (same seeds) and bucket them.
  const errs: number[] = [];
  for (let i = 0; i < sensors; i += Math.max(1, Math.floor(sensors / 50))) {
    const r = new Rng(1000 + i);
    const w = e.get(names[i])!.window;
    const byBucket = new Map<number, number[]>();
    for (let k = 0; k < perSensor; k++) {
      const ts = Math.round(T0 + k * step);
      const idx = Math.floor(ts / w.bucketMs);
      let a = byBucket.get(idx);
      if (!a) byBucket.set(idx, (a = []));
      a.push(20 + 2 * r.normal());
    }
    errs.push(...quartileErrors(w, byBucket));
  }
  return {
    sensors,
    readingsPerSensor: perSensor,
    processPerSec: Math.round((sensors * perSensor) / seconds),
    stateBytesPerSensorMean: Math.round(sum / sensors),
    stateBytesPerSensorMax: max,
    heapBytesPerSensor: (globalThis as { gc?: unknown }).gc
      ? Math.round(heap / sensors)
      : 'run with --expose-gc',
    quartileRankErrorMax: +Math.max(...errs).toFixed(5),
    quartileRankErrorMean: +(errs.reduce((a, b) => a + b, 0) / errs.length).toFixed(5),
  };
}

export async function run(): Promise<Record<string, unknown>> {
  const out: Record<string, unknown> = { sketch: { ...SKETCH } };
  out.throughput = throughput(normals(1_000_000, 42));
  out.fleet10k = fleet(10_000, 1_000);
  return out;
}
