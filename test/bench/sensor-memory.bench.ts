/**
 * Memory per sensor behind HEAP_BYTES_PER_SENSOR and DEFAULT_MAX_SENSORS (libs/engine/sensor-budget.ts):
 * heap plus typed-array (external) bytes freed by dropping an engine after a full default window, at three reading
 * rates, and of sensors that sent one reading each (the runaway-id case). Needs node --expose-gc.
 */
import { defaultConfig } from '../../libs/config/config.js';
import { Engine } from '../../libs/engine/engine.js';
import { HEAP_BYTES_PER_SENSOR } from '../../libs/engine/sensor-budget.js';
import { mulberry32 } from './prng.js';

const gc = (globalThis as { gc?: () => void }).gc;
const held = (): number => {
  gc?.();
  const m = process.memoryUsage();
  return m.heapUsed + m.external;
};

function bytesPerSensor(sensors: number, readingsEach: number, stepMs: number): number {
  let engine: Engine | null = new Engine(defaultConfig());
  const names = Array.from({ length: sensors }, (_, i) => `unit-${Math.floor(i / 100)}/tag-${i % 100}`);
  const rng = mulberry32(7);
  const t0 = Date.parse('2026-01-01T00:00:00.000Z');
  for (let k = 0; k < readingsEach; k++)
    for (let i = 0; i < sensors; i++)
      engine.process({ sensor: names[i], ts: t0 + k * stepMs, value: 20 + 4 * (rng() - 0.5) });
  if (engine.sensorCount !== sensors) throw new Error('engine lost sensors');
  // What letting go of the engine frees is what it held: unaffected by earlier cases' garbage.
  const withEngine = held();
  engine = null;
  return Math.round((withEngine - held()) / sensors);
}

export function run(): Promise<Record<string, unknown>> {
  if (!gc) return Promise.resolve({ skipped: 'run with node --expose-gc (npm run bench does)' });
  return Promise.resolve({
    budgetBytesPerSensor: HEAP_BYTES_PER_SENSOR,
    oneReadingEach100k: bytesPerSensor(100_000, 1, 1_000),
    fullWindowOneAMinute10k: bytesPerSensor(10_000, 1_560, 60_000),
    fullWindowOneEvery10s300: bytesPerSensor(300, 9_360, 10_000),
  });
}
