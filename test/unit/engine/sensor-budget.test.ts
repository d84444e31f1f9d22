/** The sensor limit and idle eviction (libs/engine/sensor-budget.ts, Engine.evictIdle). */
import { describe, expect, it } from 'vitest';
import { defaultConfig, validateConfig } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';
import {
  DEFAULT_MAX_SENSORS,
  HEAP_BYTES_PER_SENSOR,
  processMemoryBudget,
  PROFILED_SENSOR_WEIGHT,
  SensorBudget,
} from '../../../libs/engine/sensor-budget.js';

const T0 = Date.parse('2026-03-01T00:00:00.000Z');
const HOUR = 3_600_000;
const DAY = 24 * HOUR; // the default window

describe('sensor limit', () => {
  it('rejects readings of new sensors beyond the limit, with reason sensor_limit; known sensors go on', () => {
    const engine = new Engine(defaultConfig(), new SensorBudget(3));
    for (const id of ['a', 'b', 'c'])
      expect(engine.process({ sensor: id, ts: T0, value: 1 }).accepted).toBe(true);
    const out = engine.process({ sensor: 'd', ts: T0, value: 1 });
    expect(out.accepted).toBe(false);
    if (!out.accepted) {
      expect(out.reason).toBe('sensor_limit');
      expect(out.detail).toContain('limit of 3 sensors');
    }
    expect(engine.process({ sensor: 'a', ts: T0 + 1, value: 2 }).accepted).toBe(true);
    expect(engine.sensorCount).toBe(3);
    expect(engine.get('a')!.seen).toBe(2);
  });

  it('is shared by every engine of a process', () => {
    const budget = new SensorBudget(2);
    const p0 = new Engine(defaultConfig(), budget);
    const p1 = new Engine(defaultConfig(), budget);
    expect(p0.process({ sensor: 'a', ts: T0, value: 1 }).accepted).toBe(true);
    expect(p1.process({ sensor: 'b', ts: T0, value: 1 }).accepted).toBe(true);
    expect(p0.process({ sensor: 'c', ts: T0, value: 1 }).accepted).toBe(false);
    // A partition dropped as a whole gives its room back.
    p1.releaseAll();
    expect(budget.used).toBe(1);
    expect(p0.process({ sensor: 'c', ts: T0, value: 1 }).accepted).toBe(true);
  });

  it('counts restored state without refusing it', () => {
    const src = new Engine(defaultConfig());
    for (const id of ['a', 'b', 'c']) src.process({ sensor: id, ts: T0, value: 1 });
    const budget = new SensorBudget(2);
    const dst = new Engine(defaultConfig(), budget);
    for (const id of ['a', 'b', 'c']) dst.restore(src.encode(id)!);
    expect(dst.sensorCount).toBe(3);
    expect(budget.used).toBe(3);
    expect(dst.process({ sensor: 'd', ts: T0, value: 1 }).accepted).toBe(false);
    dst.forget('a');
    dst.forget('b');
    expect(dst.process({ sensor: 'd', ts: T0, value: 1 }).accepted).toBe(true);
  });
});

describe('sensor limit, weighted by memory', () => {
  const profiledLines = validateConfig({ sensors: [{ match: 'line-1/*', profile: 'daily' }] });

  it('a profiled sensor takes PROFILED_SENSOR_WEIGHT places, a plain one 1; forgetting gives them back', () => {
    expect(PROFILED_SENSOR_WEIGHT).toBe(3);
    const budget = new SensorBudget(7);
    const engine = new Engine(profiledLines, budget);
    expect(engine.process({ sensor: 'line-1/a', ts: T0, value: 1 }).accepted).toBe(true);
    expect(engine.process({ sensor: 'line-1/b', ts: T0, value: 1 }).accepted).toBe(true);
    expect(budget.used).toBe(6);
    // One place is left: a plain sensor fits, a profiled one does not.
    const refused = engine.process({ sensor: 'line-1/c', ts: T0, value: 1 });
    expect(refused.accepted).toBe(false);
    if (!refused.accepted) expect(refused.reason).toBe('sensor_limit');
    expect(engine.process({ sensor: 'line-2/a', ts: T0, value: 1 }).accepted).toBe(true);
    expect(budget.used).toBe(7);
    engine.forget('line-1/a');
    expect(budget.used).toBe(4);
    expect(engine.process({ sensor: 'line-1/c', ts: T0, value: 1 }).accepted).toBe(true);
    engine.releaseAll();
    expect(budget.used).toBe(0);
  });

  it('restored profiled state counts its weight; replacing a sensor state does not count it twice', () => {
    const src = new Engine(profiledLines);
    src.process({ sensor: 'line-1/a', ts: T0, value: 1 });
    const budget = new SensorBudget(10);
    const dst = new Engine(profiledLines, budget);
    dst.restore(src.encode('line-1/a')!);
    dst.restore(src.encode('line-1/a')!);
    expect(budget.used).toBe(3);
  });

  it('idle eviction gives back the places of a profiled sensor', () => {
    const budget = new SensorBudget(6);
    const engine = new Engine(validateConfig({ defaults: { profile: 'daily', profileDays: 1 } }), budget);
    engine.process({ sensor: 'quiet', ts: T0, value: 1 });
    engine.process({ sensor: 'live', ts: T0 + 2 * DAY, value: 1 });
    expect(budget.used).toBe(6);
    // Past both the window and profileDays of silence, a new sensor needs the room: quiet goes.
    expect(engine.process({ sensor: 'new', ts: T0 + 2 * DAY, value: 1 }).accepted).toBe(true);
    expect(engine.takeEvicted()).toEqual(['quiet']);
    expect(budget.used).toBe(6);
  });
});

describe('idle eviction', () => {
  it('evicts sensors silent for longer than their window, measured in event time', () => {
    const budget = new SensorBudget(10);
    const engine = new Engine(defaultConfig(), budget);
    engine.process({ sensor: 'quiet', ts: T0, value: 1 });
    engine.process({ sensor: 'busy', ts: T0, value: 1 });
    engine.process({ sensor: 'busy', ts: T0 + DAY, value: 1 });
    expect(engine.evictIdle()).toBe(0); // exactly one window: kept
    engine.process({ sensor: 'busy', ts: T0 + DAY + 1, value: 1 });
    expect(engine.evictIdle()).toBe(1);
    expect(engine.takeEvicted()).toEqual(['quiet']);
    expect(engine.takeEvicted()).toEqual([]);
    expect(engine.get('quiet')).toBeUndefined();
    expect(budget.used).toBe(1);
    expect(engine.evictedTotal).toBe(1);
    // Back again, it starts like a new sensor (its window would have been empty anyway).
    engine.process({ sensor: 'quiet', ts: T0 + 2 * DAY, value: 1 });
    expect(engine.get('quiet')!.seen).toBe(1);
  });

  it('keeps a silent sensor with a raised alert, so its clear can still be published', () => {
    const config = validateConfig({ sensors: [{ match: 'tank/*', max: 10 }] });
    const engine = new Engine(config, new SensorBudget(10));
    const raised = engine.process({ sensor: 'tank/level', ts: T0, value: 50 });
    expect(raised.events.map((e) => e.state)).toEqual(['raised']);
    engine.process({ sensor: 'other', ts: T0 + 2 * DAY, value: 1 });
    expect(engine.evictIdle()).toBe(0);
    expect(engine.get('tank/level')).toBeDefined();
  });

  it('makes room at the limit by evicting idle sensors before rejecting', () => {
    const engine = new Engine(defaultConfig(), new SensorBudget(2));
    engine.process({ sensor: 'old', ts: T0, value: 1 });
    engine.process({ sensor: 'live', ts: T0 + 2 * DAY, value: 1 });
    const out = engine.process({ sensor: 'new', ts: T0 + 2 * DAY, value: 1 });
    expect(out.accepted).toBe(true);
    expect(engine.takeEvicted()).toEqual(['old']);
    // Nothing idle left: the next new sensor is rejected.
    expect(engine.process({ sensor: 'newer', ts: T0 + 2 * DAY, value: 1 }).accepted).toBe(false);
  });
});

describe('processMemoryBudget', () => {
  const MIB = 2 ** 20;

  it('is 256 MiB plus every place at 40 KiB with 25 % slack, rounded up to a MiB; heap 128 MiB below', () => {
    expect(HEAP_BYTES_PER_SENSOR).toBe(40_960);
    // 50,000 x 40 KiB x 1.25 = 2,441.4 MiB; + 256 = 2,697.4 -> 2,698 (the deploy/k8s figure).
    expect(processMemoryBudget(DEFAULT_MAX_SENSORS)).toEqual({ memoryMiB: 2_698, heapMiB: 2_570 });
    // 1,000 x 40 KiB x 1.25 = 48.8 MiB; + 256 -> 305.
    expect(processMemoryBudget(1_000)).toEqual({ memoryMiB: 305, heapMiB: 177 });
    // 200 x 40 KiB x 1.25 = 9.8 MiB; + 256 -> 266 (the live test's budget, sensor-limit-memory.test.ts).
    expect(processMemoryBudget(200)).toEqual({ memoryMiB: 266, heapMiB: 138 });
    expect(processMemoryBudget(1)).toEqual({ memoryMiB: 257, heapMiB: 129 });
  });

  it('grows with the limit and the bytes per place, never below the places at their bytes', () => {
    for (const places of [1, 7, 1_000, 16_666, 50_000, 200_000]) {
      const { memoryMiB, heapMiB } = processMemoryBudget(places);
      expect(memoryMiB * MIB).toBeGreaterThanOrEqual(256 * MIB + places * HEAP_BYTES_PER_SENSOR * 1.25);
      expect(memoryMiB * MIB).toBeLessThan(256 * MIB + places * HEAP_BYTES_PER_SENSOR * 1.25 + MIB);
      expect(heapMiB).toBe(memoryMiB - 128);
      expect(processMemoryBudget(places + 1_000).memoryMiB).toBeGreaterThan(memoryMiB);
    }
    expect(processMemoryBudget(1_000, 2 * HEAP_BYTES_PER_SENSOR).memoryMiB).toBe(354);
  });

  it('refuses a limit that is not a whole number >= 1', () => {
    expect(() => processMemoryBudget(0)).toThrow(RangeError);
    expect(() => processMemoryBudget(2.5)).toThrow(/whole number/);
  });
});
