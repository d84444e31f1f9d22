/**
 * The monitor's own Redis restarts under it (a dedicated redis-server with the append-only file and
 * `appendfsync everysec`, as deploy/local and docker-compose run it), and later comes back with an
 * older checkpoint than the monitor wrote (as after a power loss that took the append-only file's
 * last second, or a replica promoted before it had the last writes).
 *  - SIGKILL + restart: every acknowledged checkpoint is still there (the append-only file is
 *    written before Redis answers; `everysec` only delays the fsync), and the state stays exact.
 *  - Back in time (the partition keys are put back to an earlier DUMP): the next checkpoint finds
 *    an offset it did not write, writes the exact memory state in full, logs and counts it. Only
 *    some sensors read after that, so writing just the changed ones would leave the others behind
 *    and the exact-state check would fail.
 * Port 23530 (this test only), below Linux's ephemeral port range (32768-60999), where a client socket could hold it.
 */
import { describe, expect, it } from 'vitest';
import { keyPartitioner } from '../../../services/replay/partitioner.js';
import { partitionKeys } from '../../../services/redis/keys.js';
import { useOwnRedis } from '../../harness/own-redis.js';
import { kafkaClient } from '../../harness/services.js';
import {
  expectExactState,
  expectNoLostAlerts,
  generateReadings,
  produceReadings,
  sleep,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
} from './helpers.js';

const PORT = Number(process.env.STREAMFENCE_TEST_RESTART_REDIS_PORT ?? 23530);
const PARTITIONS = 4;

describe('streamfence run: its Redis restarts (append-only file) and comes back older', () => {
  const own = useOwnRedis(PORT);
  const { url, client: redis } = own;

  const bed = useMonitorBed();
  const { topic, group, prefix } = bed;

  async function offsets(): Promise<(string | null)[]> {
    const out: (string | null)[] = [];
    for (let p = 0; p < PARTITIONS; p++)
      out.push(await redis.get(partitionKeys(prefix, group, topic, p).offset));
    return out;
  }

  it('keeps exact state across SIGKILL + restart, and rewrites in full when Redis went back in time', async () => {
    await own.start();
    const config = testConfig();
    const readings = generateReadings(12, 420, 23);
    const third = Math.floor(readings.length / 3);
    const kafka = kafkaClient();
    await bed.createTopics([PARTITIONS, 2, 1]);
    await produceReadings(kafka, topic, readings.slice(0, third));
    const mon = bed.spawn(writeTestConfig(), { extra: ['--redis', url] });
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    // 1. Mid-stream SIGKILL and restart from the same folder: no acknowledged checkpoint is lost.
    const chunk = Math.ceil(third / 10);
    const producing = (async () => {
      for (let i = third; i < 2 * third; i += chunk) {
        await produceReadings(kafka, topic, readings.slice(i, Math.min(i + chunk, 2 * third)));
        await sleep(250);
      }
    })();
    await sleep(1_000);
    const before = await offsets();
    await own.kill();
    await sleep(1_500);
    await own.start();
    const after = await offsets();
    for (let p = 0; p < PARTITIONS; p++) expect(Number(after[p])).toBeGreaterThanOrEqual(Number(before[p]));
    await producing;
    await waitCheckpointedToEnd(redis, prefix, group, topic);
    await expectExactState({ redis, prefix, group, topic }, readings.slice(0, 2 * third), config);
    expect(mon.logs.some((l) => /older checkpoint|state gone from Redis/.test(l))).toBe(false);

    // 2. Back in time: keep a DUMP of every partition's keys, checkpoint further, put the DUMP back.
    const saved: [string, Buffer][] = [];
    for (let p = 0; p < PARTITIONS; p++) {
      for (const key of Object.values(partitionKeys(prefix, group, topic, p))) {
        const dump = await redis.dumpBuffer(key);
        if (dump !== null) saved.push([key, dump]);
      }
    }
    const lateStart = 2 * third + Math.floor(third / 2);
    await produceReadings(kafka, topic, readings.slice(2 * third, lateStart));
    await waitCheckpointedToEnd(redis, prefix, group, topic);
    for (const [key, dump] of saved) await redis.restore(key, 0, dump, 'REPLACE');

    // After it only one sensor per partition reads: the others changed in the lost writes only.
    const partitionOf = keyPartitioner(PARTITIONS);
    const sensors = [...new Set(readings.map((r) => r.sensor))];
    const readers = new Set<string>();
    for (let p = 0; p < PARTITIONS; p++) {
      const first = sensors.find((s) => partitionOf(s) === p);
      if (first !== undefined) readers.add(first);
    }
    expect(readers.size).toBeLessThan(sensors.length);
    const late = readings.slice(lateStart).filter((r) => readers.has(r.sensor));
    await produceReadings(kafka, topic, late);
    await waitCheckpointedToEnd(redis, prefix, group, topic);
    const produced = [...readings.slice(0, lateStart), ...late];
    await expectExactState({ redis, prefix, group, topic }, produced, config);
    expect(mon.logs.some((l) => /"level":"error".*went back to an older checkpoint/.test(l))).toBe(true);

    const port = await mon.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    expect(metrics).toMatch(/^streamfence_checkpoints_total\{result="rolled_back"\} [1-9]\d*$/m);
    expect(metrics).toMatch(/^streamfence_state_rebuilds_total\{cause="checkpoint_rolled_back"\} [1-9]\d*$/m);
    expect(metrics).toMatch(/^streamfence_backoff_total\{dependency="redis",cause="\w+"\} [1-9]\d*$/m);
    expect(mon.logs.some((l) => /now owned by another monitor/.test(l))).toBe(false);
    expect(
      await expectNoLostAlerts(bed.alertTopic, produced, config, { onlyReferenceEvents: true }),
    ).toBeGreaterThan(0);
    mon.child.kill('SIGTERM');
    expect(await mon.exited).toBe(0);
  });
});
