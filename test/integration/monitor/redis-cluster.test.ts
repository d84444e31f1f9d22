/**
 * The monitor on a Redis Cluster (three primaries, three replicas, started by the real
 * `stack-up.sh --redis-cluster`): mid-stream, the primary that holds one partition's checkpoint
 * slot is SIGKILLed; its replica takes over (cluster-node-timeout 2 s, replica validity factor 0),
 * the monitor's checkpoints to that slot fail and are retried meanwhile (counted as backoff), and
 * then go to the new primary. Every sensor's stored `seen` equals what was produced, and no alert
 * event is lost or invented compared with the in-process replay of the same readings. A replica
 * may be promoted without the last write it had not received yet (replication is asynchronous);
 * the monitor then finds an older offset than it wrote and writes its exact state in full, so the
 * check holds either way. `inspect` reads every sensor back by scanning every primary, and
 * stack-up run again brings the killed node back as a replica.
 * Ports 21021-21026 and bus ports 31021-31026 (port + 10000), below Linux's ephemeral port range (32768-60999).
 */
import { execFile } from 'node:child_process';
import { promisify } from 'node:util';
import type { Cluster } from 'ioredis';
import { afterAll, describe, expect, it } from 'vitest';
import { partitionKeys, partitionTag } from '../../../services/redis/keys.js';
import {
  clusterNodes,
  primaryOfSlot,
  startStackRedisCluster,
  type StackRedisCluster,
} from '../../harness/stack-redis-cluster.js';
import { kafkaClient } from '../../harness/services.js';
import {
  CLI,
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

const BASE_PORT = Number(process.env.STREAMFENCE_TEST_REDIS_CLUSTER_PORT ?? 21021);
const PARTITIONS = 4;
const run = promisify(execFile);

/** Polls until `check` returns a non-null value (or fails after timeoutMs). */
async function waitFor<T>(what: string, check: () => Promise<T | null>, timeoutMs = 30_000): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const got = await check().catch(() => null);
    if (got !== null) return got;
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${what}`);
    await sleep(200);
  }
}

describe('streamfence run on a Redis Cluster: the primary of a checkpoint slot dies', () => {
  let cluster: StackRedisCluster | undefined;
  let redis: Cluster | undefined;
  afterAll(async () => {
    redis?.disconnect();
    await cluster?.down();
  });

  const bed = useMonitorBed();
  const { topic, group, prefix } = bed;

  it('resumes on the promoted replica with exact state and no lost or invented alert', async () => {
    cluster = await startStackRedisCluster(BASE_PORT);
    expect(cluster.url).toMatch(/^redis\+cluster:\/\/127\.0\.0\.1:\d+(,127\.0\.0\.1:\d+){5}$/);
    redis = cluster.client();
    const config = testConfig();
    const readings = generateReadings(12, 420, 29);
    const third = Math.floor(readings.length / 3);
    const kafka = kafkaClient();
    await bed.createTopics([PARTITIONS, 2, 1]);
    await produceReadings(kafka, topic, readings.slice(0, third));
    const mon = bed.spawn(writeTestConfig(), { extra: ['--redis', cluster.url] });
    await waitCheckpointedToEnd(redis, prefix, group, topic);

    // The primary that serves partition 0's slot (all three of its keys share it: one hash tag).
    const tag = partitionTag(prefix, group, topic, 0);
    const slot = Number(await redis.cluster('KEYSLOT', tag));
    const keys = Object.values(partitionKeys(prefix, group, topic, 0));
    for (const k of keys) expect(Number(await redis.cluster('KEYSLOT', k))).toBe(slot);
    const other = cluster.ports[0];
    const victim = await waitFor('the slot primary', () => primaryOfSlot(other, slot));
    const witness = cluster.ports.find((p) => p !== victim)!;

    // Mid-stream SIGKILL of that primary.
    const chunk = Math.ceil(third / 10);
    const producing = (async () => {
      for (let i = third; i < 2 * third; i += chunk) {
        await produceReadings(kafka, topic, readings.slice(i, Math.min(i + chunk, 2 * third)));
        await sleep(250);
      }
    })();
    await sleep(1_000);
    process.kill(cluster.pidOf(victim), 'SIGKILL');
    const successor = await waitFor('a replica promoted for the slot', async () => {
      const p = await primaryOfSlot(witness, slot);
      return p !== null && p !== victim ? p : null;
    });
    expect(successor).not.toBe(victim);
    await producing;
    await produceReadings(kafka, topic, readings.slice(2 * third));
    await waitCheckpointedToEnd(redis, prefix, group, topic, 90_000);
    await expectExactState({ redis, prefix, group, topic }, readings, config);
    expect(
      await expectNoLostAlerts(bed.alertTopic, readings, config, { onlyReferenceEvents: true }),
    ).toBeGreaterThan(0);

    const port = await mon.metricsPort();
    const metrics = await (await fetch(`http://127.0.0.1:${port}/metrics`)).text();
    // The checkpoints to the dead primary's slot failed until the replica took over.
    expect(metrics).toMatch(/^streamfence_backoff_total\{dependency="redis",cause="\w+"\} [1-9]\d*$/m);
    expect(mon.logs.some((l) => /now owned by another monitor/.test(l))).toBe(false);

    // inspect scans every primary: one line per sensor, the same counts.
    const inspected = await run(
      process.execPath,
      [
        CLI,
        'inspect',
        '--redis',
        cluster.url,
        '--state-prefix',
        prefix,
        '--group',
        group,
        '--input-topic',
        topic,
      ],
      { env: { ...process.env, STREAMFENCE_REDIS_URL: '' } },
    );
    const lines = inspected.stdout
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as { sensor: string; seen: number });
    expect(lines.length).toBe(12);
    expect(lines.reduce((n, l) => n + l.seen, 0)).toBe(readings.length);
    const partitionsByPrimary = new Set<number>();
    for (let p = 0; p < PARTITIONS; p++) {
      const s = Number(await redis.cluster('KEYSLOT', partitionTag(prefix, group, topic, p)));
      partitionsByPrimary.add((await primaryOfSlot(witness, s)) ?? -1);
    }
    // The four partitions' keys are spread over more than one primary, so one SCAN would miss some.
    expect(partitionsByPrimary.size).toBeGreaterThan(1);

    mon.child.kill('SIGTERM');
    expect(await mon.exited).toBe(0);

    // stack-up again restarts only the killed node; it rejoins as a replica.
    await cluster.up();
    const back = (await clusterNodes(victim)).find((n) => n.port === victim);
    expect(back?.primary).toBe(false);
  });
});
