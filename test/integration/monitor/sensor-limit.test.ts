/**
 * The monitor's sensor limit and idle eviction, live: readings of sensors beyond --max-sensors go
 * to the rejected topic with reason sensor_limit and are counted; sensors silent for longer than
 * their window (event time) are evicted from memory and from Redis, which makes room again.
 */
import { describe, expect, it } from 'vitest';
import { partitionKeys } from '../../../services/redis/keys.js';
import { kafkaClient } from '../../harness/services.js';
import { readTopic, useMonitorBed, waitCheckpointedToEnd, writeTestConfig } from './helpers.js';

const T0 = Date.parse('2026-06-01T08:00:00.000Z');
const LIMIT = 20;

describe('streamfence run: sensor limit', () => {
  const bed = useMonitorBed();
  const { topic, rejectedTopic, group, prefix, redis } = bed;

  it('rejects new sensors beyond the limit, evicts idle ones from memory and Redis', async () => {
    await bed.createTopics([1, 1, 1]);
    const reading = (sensor: string, ts: number) => ({
      key: sensor,
      value: JSON.stringify({ sensor, ts: new Date(ts).toISOString(), value: 1 }),
    });
    // 30 sensors one second apart: 20 fit, 10 are over the limit.
    const first = Array.from({ length: 30 }, (_, i) => reading(`meter-${i}`, T0 + i * 1_000));
    // 11 minutes later (the test window is 10 min) meter-0 speaks again; meter-1..19 are idle.
    const later = [reading('meter-0', T0 + 660_000), reading('meter-new', T0 + 660_000)];
    const producer = kafkaClient().producer();
    await producer.connect();
    await producer.send({ topic, messages: first });
    await producer.send({ topic, messages: later });
    await producer.disconnect();

    const mon = bed.spawn(writeTestConfig(), { env: { STREAMFENCE_MAX_SENSORS: String(LIMIT) } });
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    const rejected = (await readTopic(rejectedTopic)).map(
      (m) => JSON.parse(m.value!.toString()) as { reason: string; key: string | null; detail: string },
    );
    expect(rejected.map((r) => r.reason)).toEqual(Array(10).fill('sensor_limit'));
    expect(rejected.map((r) => r.key).sort()).toEqual(
      Array.from({ length: 10 }, (_, i) => `meter-${20 + i}`).sort(),
    );
    expect(rejected[0].detail).toContain(`limit of ${LIMIT} sensors`);

    // Only the two sensors that are not idle keep state in Redis.
    const stateKey = partitionKeys(prefix, group, topic, 0).state;
    expect((await redis.hkeys(stateKey)).sort()).toEqual(['meter-0', 'meter-new']);

    const port = await mon.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    expect(metrics).toMatch(/^streamfence_rejected_total\{reason="sensor_limit"\} 10$/m);
    expect(metrics).toMatch(/^streamfence_sensors_evicted_total 19$/m);
    expect(metrics).toMatch(new RegExp(`^streamfence_sensor_limit ${LIMIT}$`, 'm'));
  });
});
