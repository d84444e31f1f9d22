/**
 * What `profile: daily` costs (#11): the engine on the same pre-generated readings with the
 * profile on (Europe/Berlin, profileDays 7) and off (the default window alone), in the same run:
 * - throughput: readings/s, best of two passes each on fresh state (the first pays for JIT), passes
 *   alternating so a busy moment of the shared machine hits both; the ratio on / off is the figure;
 * - memory per sensor after one more pass each: encoded state bytes (what Redis holds) and the heap plus
 *   typed-array bytes the live engine holds beyond what the process held before it (after a full
 *   garbage collection both times; needs node --expose-gc, as `npm run bench` runs).
 * Readings: 200 sensors, one a minute for 8 days (2.3 M readings; from day 4 the profile judges),
 * each a daily cycle with noise; event times are epoch ms (timestamp parsing is the same cost with
 * or without a profile and is measured by the replay and monitor benches).
 */
import { validateConfig, type EngineConfig } from '../../libs/config/config.js';
import { Engine } from '../../libs/engine/engine.js';
import { mulberry32 } from './prng.js';

const SENSORS = 200;
const DAYS = 8;
const STEP_MS = 60_000;
const PER_SENSOR = (DAYS * 86_400_000) / STEP_MS;
const T0 = Date.UTC(2026, 0, 5);

const gc = (globalThis as { gc?: () => void }).gc;
const held = (): number => {
  // Twice: the first collection may leave objects that only finalisers or weak maps released.
  gc?.();
  gc?.();
  const usage = process.memoryUsage();
  return usage.heapUsed + usage.external;
};

/** Per sensor, a level that follows the day (peak mid-afternoon) plus noise; the same every run. */
function readings(): Float64Array[] {
  const rng = mulberry32(11);
  return Array.from({ length: SENSORS }, (_, sensorIndex) => {
    const values = new Float64Array(PER_SENSOR);
    const level = 40 + (sensorIndex % 10);
    for (let step = 0; step < PER_SENSOR; step++) {
      const dayShare = ((step * STEP_MS) % 86_400_000) / 86_400_000;
      const noise = rng() + rng() + rng() + rng() - 2;
      values[step] = level + 12 * Math.sin(2 * Math.PI * (dayShare - 0.375)) + 1.5 * noise;
    }
    return values;
  });
}

/**
 * The engine being filled, held from module scope: V8 may collect an object that only a dead local
 * still names, so a local would let the engine go before it is measured.
 */
let measured: Engine | null = null;

/** Feeds every reading to `measured` (a fresh engine on `config`); the seconds it took. */
function feed(config: EngineConfig, names: string[], values: Float64Array[]): number {
  measured = new Engine(config);
  const started = performance.now();
  for (let step = 0; step < PER_SENSOR; step++) {
    const ts = T0 + step * STEP_MS;
    for (let sensor = 0; sensor < SENSORS; sensor++)
      measured.process({ sensor: names[sensor], ts, value: values[sensor][step] });
  }
  return (performance.now() - started) / 1000;
}

/** Best readings/s over the passes (a fresh engine each), the engine dropped after each. */
function timePass(config: EngineConfig, names: string[], values: Float64Array[]): number {
  gc?.();
  const perSec = (SENSORS * PER_SENSOR) / feed(config, names, values);
  measured = null;
  return perSec;
}

/** Held bytes (heap and typed arrays, live engine vs none) and encoded state bytes, per sensor. */
function memory(config: EngineConfig, names: string[], values: Float64Array[]) {
  measured = null;
  const before = held();
  feed(config, names, values);
  const heldBytes = held() - before;
  let stateBytes = 0;
  for (const name of names) stateBytes += measured!.encode(name)!.length;
  measured = null;
  return {
    stateBytesPerSensor: Math.round(stateBytes / SENSORS),
    heldBytesPerSensor: gc ? Math.round(heldBytes / SENSORS) : ('run with node --expose-gc' as const),
  };
}

export function run(): Promise<Record<string, unknown>> {
  const names = Array.from(
    { length: SENSORS },
    (_, sensor) => `zone-${Math.floor(sensor / 20)}/flow-${sensor % 20}`,
  );
  const values = readings();
  const off = validateConfig({});
  const on = validateConfig({ defaults: { profile: 'daily', timeZone: 'Europe/Berlin', profileDays: 7 } });
  const best = { off: 0, on: 0 };
  for (let round = 0; round < 2; round++) {
    best.off = Math.max(best.off, timePass(off, names, values));
    best.on = Math.max(best.on, timePass(on, names, values));
  }
  const memoryOff = memory(off, names, values);
  const memoryOn = memory(on, names, values);
  return Promise.resolve({
    sensors: SENSORS,
    readings: SENSORS * PER_SENSOR,
    days: DAYS,
    profileOffPerSec: Math.round(best.off),
    profileOnPerSec: Math.round(best.on),
    throughputRatioOnToOff: +(best.on / best.off).toFixed(3),
    stateBytesPerSensorOff: memoryOff.stateBytesPerSensor,
    stateBytesPerSensorOn: memoryOn.stateBytesPerSensor,
    heldBytesPerSensorOff: memoryOff.heldBytesPerSensor,
    heldBytesPerSensorOn: memoryOn.heldBytesPerSensor,
  });
}
