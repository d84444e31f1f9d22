/**
 * A producer that puts a counter into the sensor id, live: RUNAWAY distinct ids beyond a limit of
 * LIMIT sensors stream through `streamfence run` with its V8 heap capped at the limit's budget
 * (processMemoryBudget, the figure deploy/k8s derives its memory from). The monitor stays up and
 * within the budget (sampled from its own metrics endpoint), exactly RUNAWAY readings are rejected
 * with reason sensor_limit (rejected topic and counter), and every kept sensor's state in Redis is
 * the same bytes as an in-process Engine with the same limit gives.
 *
 * Could it pass without the limit? Each runaway id would hold about 1.0 KB of heap (a sensor with
 * one reading, `npm run bench -- sensor-memory`): RUNAWAY of them are more than the heap cap and,
 * with an idle monitor's 80 MB, more than the budget; the first test checks that arithmetic. To
 * see it fail, run this file with STREAMFENCE_TEST_LIMIT_LIFTED=1 (the monitor gets a limit of ten
 * million, the budget stays LIMIT's): on 2026-12-03 the monitor then died out of heap (SIGABRT at
 * the cap) within a minute, and the test failed with "the monitor exited (SIGABRT)".
 * STREAMFENCE_TEST_LIMIT_SENSORS and STREAMFENCE_TEST_LIMIT_RUNAWAY change the two counts.
 */
import { describe, expect, it } from 'vitest';
import type { Kafka } from 'kafkajs';
import { Engine } from '../../../libs/engine/engine.js';
import type { Reading } from '../../../libs/engine/reading.js';
import { processMemoryBudget, SensorBudget } from '../../../libs/engine/sensor-budget.js';
import { partitionKeys } from '../../../services/redis/keys.js';
import { kafkaClient } from '../../harness/services.js';
import {
  readTopic,
  sleep,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
} from './helpers.js';

const LIMIT = Number(process.env.STREAMFENCE_TEST_LIMIT_SENSORS ?? 200);
const RUNAWAY = Number(process.env.STREAMFENCE_TEST_LIMIT_RUNAWAY ?? 220_000);
/** The control run: the same stream and budget with the limit lifted, which must fail. */
const LIFTED = process.env.STREAMFENCE_TEST_LIMIT_LIFTED === '1';
/** Every KEPT_EVERY-th message of the runaway stretch is a reading of a kept sensor. */
const KEPT_EVERY = 25;
const T0 = Date.parse('2026-07-01T06:00:00.000Z');
const MIB = 2 ** 20;
/** An idle monitor's resident memory, measured (sensor-budget.ts PROCESS_BASE_BYTES). */
const IDLE_RESIDENT = 80 * MIB;
/** Heap of a sensor with one reading (`npm run bench -- sensor-memory`, 2026-12-03). */
const ONE_READING_SENSOR_BYTES = 1_000;

/**
 * LIMIT kept sensors, then RUNAWAY ids seen once each, with the kept sensors reading on among
 * them. One message a millisecond of event time: the whole stream stays inside the test window
 * (10 min), so no sensor is idle long enough to be evicted and make room.
 */
function runawayStream(): Reading[] {
  const out: Reading[] = [];
  const push = (sensor: string, value: number) => out.push({ sensor, ts: T0 + out.length, value });
  for (let i = 0; i < LIMIT; i++) push(`plant/meter-${i}`, 50 + (i % 11));
  let kept = 0;
  for (let j = 0; j < RUNAWAY; j++) {
    if (j % KEPT_EVERY === 0) push(`plant/meter-${kept++ % LIMIT}`, 50 + ((kept * 7) % 13));
    push(`gateway/seq-${j}`, 20 + (j % 7));
  }
  return out;
}

async function produce(kafka: Kafka, topic: string, readings: Reading[]): Promise<void> {
  const producer = kafka.producer({ idempotent: true, maxInFlightRequests: 1 });
  await producer.connect();
  try {
    for (let i = 0; i < readings.length; i += 10_000) {
      const messages = readings.slice(i, i + 10_000).map((r) => ({
        key: r.sensor,
        value: JSON.stringify({ sensor: r.sensor, ts: new Date(r.ts).toISOString(), value: r.value }),
      }));
      await producer.send({ topic, acks: -1, messages });
    }
  } finally {
    await producer.disconnect();
  }
}

interface Peak {
  resident: number;
  heapUsed: number;
  samples: number;
}

/** Polls the monitor's /metrics (prom-client's process and heap metrics) until stop() is called. */
function sampleMemory(port: number): { peak: Peak; stop: () => Promise<void> } {
  const peak: Peak = { resident: 0, heapUsed: 0, samples: 0 };
  let running = true;
  const gauge = (text: string, name: string) => Number(new RegExp(`^${name} (\\S+)$`, 'm').exec(text)?.[1]);
  const loop = (async () => {
    while (running) {
      // A scrape that fails (the monitor gone) ends the sampling; the test checks the monitor is up.
      const text = await fetch(`http://127.0.0.1:${port}/metrics`)
        .then((res) => res.text())
        .catch(() => null);
      if (text === null) return;
      peak.resident = Math.max(peak.resident, gauge(text, 'process_resident_memory_bytes'));
      peak.heapUsed = Math.max(peak.heapUsed, gauge(text, 'nodejs_heap_size_used_bytes'));
      peak.samples++;
      await sleep(200);
    }
  })();
  return {
    peak,
    stop: async () => {
      running = false;
      await loop;
    },
  };
}

describe('streamfence run: a stream of runaway sensor ids', () => {
  const bed = useMonitorBed();
  const { topic, rejectedTopic, group, prefix, redis } = bed;
  const budget = processMemoryBudget(LIMIT);

  it('is sized so that the ids would not fit in the budget without the limit', () => {
    // Their heap alone would pass the cap by a fifth (the monitor dies), and resident memory the budget.
    expect(RUNAWAY * ONE_READING_SENSOR_BYTES).toBeGreaterThan(1.2 * budget.heapMiB * MIB);
    expect(IDLE_RESIDENT + RUNAWAY * ONE_READING_SENSOR_BYTES).toBeGreaterThan(budget.memoryMiB * MIB);
  });

  it('keeps the monitor up and within the limit budget; rejects exactly the ids beyond it', async () => {
    await bed.createTopics([1, 1, 1]);
    const readings = runawayStream();
    await produce(kafkaClient(), topic, readings);

    const mon = bed.spawn(writeTestConfig(), {
      env: {
        STREAMFENCE_MAX_SENSORS: String(LIFTED ? 10_000_000 : LIMIT),
        NODE_OPTIONS: `--max-old-space-size=${budget.heapMiB}`,
      },
      extra: ['--log-level', 'info'],
    });
    const memory = sampleMemory(await mon.metricsPort());
    // A monitor that dies (out of heap) fails the test at once, with its last lines.
    const died = mon.exited.then((code) => {
      const last = mon.logs.filter((line) => line.trim() !== '').slice(-5);
      throw new Error(
        `the monitor exited (${code ?? mon.child.signalCode}); last lines:\n${last.join('\n')}`,
      );
    });
    await Promise.race([waitCheckpointedToEnd(redis, prefix, group, topic, 180_000), died]);
    const port = await mon.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    await memory.stop();
    console.log(JSON.stringify({ LIMIT, RUNAWAY, budget, peak: memory.peak }));

    expect(mon.child.exitCode, 'the monitor is still running').toBeNull();
    expect(memory.peak.samples).toBeGreaterThan(0);
    expect(memory.peak.resident).toBeLessThanOrEqual(budget.memoryMiB * MIB);
    expect(memory.peak.heapUsed).toBeLessThanOrEqual(budget.heapMiB * MIB);
    expect(metrics).toMatch(
      new RegExp(`^streamfence_rejected_total\\{reason="sensor_limit"\\} ${RUNAWAY}$`, 'm'),
    );
    expect(metrics).toMatch(/^streamfence_sensor_limit_used_ratio 1$/m);
    expect(metrics).toMatch(/^streamfence_sensors_evicted_total 0$/m);

    const rejected = await readTopic(rejectedTopic);
    expect(rejected.length).toBe(RUNAWAY);
    const reasons = new Set(
      rejected.map((m) => (JSON.parse(m.value!.toString()) as { reason: string }).reason),
    );
    expect([...reasons]).toEqual(['sensor_limit']);
    const keys = new Set(rejected.map((m) => m.key));
    expect(keys.size).toBe(RUNAWAY);
    for (let j = 0; j < RUNAWAY; j += 997) expect(keys.has(`gateway/seq-${j}`)).toBe(true);

    // The kept sensors' state: byte for byte what the same readings give an Engine with the same limit.
    const reference = new Engine(testConfig(), new SensorBudget(LIMIT));
    for (const r of readings) reference.process(r, 0);
    const stored = await redis.hgetallBuffer(partitionKeys(prefix, group, topic, 0).state);
    expect(Object.keys(stored).length).toBe(LIMIT);
    for (let i = 0; i < LIMIT; i++) {
      const sensor = `plant/meter-${i}`;
      expect(stored[sensor], sensor).toBeDefined();
      expect(Buffer.compare(stored[sensor], Buffer.from(reference.encode(sensor)!)), sensor).toBe(0);
    }
    expect(reference.get('plant/meter-0')!.seen).toBe(1 + Math.ceil(RUNAWAY / KEPT_EVERY / LIMIT));
  }, 240_000);
});
