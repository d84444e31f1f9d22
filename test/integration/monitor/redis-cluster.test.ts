/**
 * The monitor on a Redis Cluster (three primaries, three replicas, started by the real
 * `stack-up.sh --redis-cluster`, and again with `--redis-cluster-tls`: TLS only, ACL users):
 * mid-stream, the primary that holds one partition's checkpoint slot is SIGKILLed; its replica
 * takes over (cluster-node-timeout 2 s, replica validity factor 0), the monitor's checkpoints to
 * that slot fail and are retried meanwhile (counted as backoff), and then go to the new primary.
 * Every sensor's stored `seen` equals what was produced, and no alert event is lost or invented
 * compared with the in-process replay of the same readings. A replica may be promoted without the
 * last write it had not received yet (replication is asynchronous); the monitor then finds an
 * older offset than it wrote and writes its exact state in full, so the check holds either way.
 * `inspect` reads every sensor back by scanning every primary, and stack-up run again brings the
 * killed node back as a replica. On the TLS cluster the monitor runs as the ACL user `monitor`
 * (keys sf*), `inspect` as the read-only `reader`, `board` records an acknowledgement as
 * `monitor`, and no password is printed. On both, `/readyz` answers 503 after the kill (slots
 * without a live primary) and 200 again once the replica is promoted.
 * Ports (below Linux's ephemeral port range, 32768-60999): plain 21021-21026, TLS 21100-21105;
 * bus ports port + 10000.
 */
import { execFile, spawn } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { promisify } from 'node:util';
import { afterAll, describe, expect, it } from 'vitest';
import type { RedisClient } from '../../../services/connect/index.js';
import { partitionKeys, partitionTag } from '../../../services/redis/keys.js';
import { startStackRedisCluster, type StackRedisCluster } from '../../harness/stack-redis-cluster.js';
import { createTopic, deleteTopics, kafkaBrokers, kafkaClient, uniqueName } from '../../harness/services.js';
import {
  CLI,
  expectExactState,
  expectNoLostAlerts,
  generateReadings,
  produceReadings,
  readAlertEvents,
  sleep,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
  type MonitorBed,
  type MonitorProc,
} from './helpers.js';

const PLAIN_PORT = Number(process.env.STREAMFENCE_TEST_REDIS_CLUSTER_PORT ?? 21021);
const TLS_PORT = Number(process.env.STREAMFENCE_TEST_REDIS_CLUSTER_TLS_PORT ?? 21100);
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

/** `inspect` of the bed's state as the cluster's user (reader on the TLS cluster). */
async function inspect(cluster: StackRedisCluster, bed: MonitorBed, user: 'reader' | 'monitor') {
  const out = await run(
    process.execPath,
    [CLI, 'inspect', '--state-prefix', bed.prefix, '--group', bed.group, '--input-topic', bed.topic],
    { env: { ...process.env, STREAMFENCE_REDIS_URL: '', ...cluster.env(user) } },
  );
  return {
    stderr: out.stderr,
    lines: out.stdout
      .trim()
      .split('\n')
      .map((l) => JSON.parse(l) as { seen: number }),
  };
}

/**
 * The shared scenario: a monitor on the cluster, the primary of partition 0's checkpoint slot
 * SIGKILLed mid-stream, exact state and no lost or invented alert after the replica took over.
 * Returns the running monitor (the caller stops it) and the killed port.
 */
async function killSlotPrimaryMidStream(
  cluster: StackRedisCluster,
  redis: RedisClient,
  bed: MonitorBed,
): Promise<{ mon: MonitorProc; victim: number; witness: number }> {
  const { topic, group, prefix } = bed;
  const config = testConfig();
  const readings = generateReadings(12, 420, 29);
  const third = Math.floor(readings.length / 3);
  const kafka = kafkaClient();
  await bed.createTopics([PARTITIONS, 2, 1]);
  await produceReadings(kafka, topic, readings.slice(0, third));
  const mon = bed.spawn(writeTestConfig(), { extra: ['--redis', cluster.url], env: cluster.env('monitor') });
  await waitCheckpointedToEnd(redis, prefix, group, topic);

  // The primary that serves partition 0's slot (all three of its keys share it: one hash tag).
  const tag = partitionTag(prefix, group, topic, 0);
  const slot = Number(await redis.cluster('KEYSLOT', tag));
  const keys = Object.values(partitionKeys(prefix, group, topic, 0));
  for (const k of keys) expect(Number(await redis.cluster('KEYSLOT', k))).toBe(slot);
  const victim = await waitFor('the slot primary', () => cluster.primaryOfSlot(cluster.ports[0], slot));
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
  const metricsPort = await mon.metricsPort();
  const readyz = async () => {
    const res = await fetch(`http://127.0.0.1:${metricsPort}/readyz`);
    return { status: res.status, body: (await res.json()) as Record<string, unknown> };
  };
  expect((await readyz()).status).toBe(200);
  process.kill(cluster.pidOf(victim), 'SIGKILL');
  // Until the replica is promoted, /readyz says Redis is not all there (the dead primary's slots).
  const notReady = await waitFor(
    '/readyz 503 after the kill',
    async () => {
      const r = await readyz();
      return r.status === 503 ? r.body : null;
    },
    10_000,
  );
  expect(notReady).toMatchObject({ ready: false, redis: false });
  expect(notReady.redisSlotsDown).toBeGreaterThan(0);
  const successor = await waitFor('a replica promoted for the slot', async () => {
    const p = await cluster.primaryOfSlot(witness, slot);
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
  const inspected = await inspect(cluster, bed, cluster.tls ? 'reader' : 'monitor');
  expect(inspected.lines.length).toBe(12);
  expect(inspected.lines.reduce((n, l) => n + l.seen, 0)).toBe(readings.length);
  const partitionsByPrimary = new Set<number>();
  for (let p = 0; p < PARTITIONS; p++) {
    const s = Number(await redis.cluster('KEYSLOT', partitionTag(prefix, group, topic, p)));
    partitionsByPrimary.add((await cluster.primaryOfSlot(witness, s)) ?? -1);
  }
  // The four partitions' keys are spread over more than one primary, so one SCAN would miss some.
  expect(partitionsByPrimary.size).toBeGreaterThan(1);
  return { mon, victim, witness };
}

/** stack-up again restarts only the killed node; it rejoins as a replica. */
async function expectRejoinsAsReplica(cluster: StackRedisCluster, victim: number): Promise<void> {
  await cluster.up();
  const back = (await cluster.nodesSeenBy(victim)).find((n) => n.port === victim);
  expect(back?.primary).toBe(false);
}

describe('streamfence run on a Redis Cluster: the primary of a checkpoint slot dies', () => {
  let cluster: StackRedisCluster | undefined;
  let redis: RedisClient | undefined;
  afterAll(async () => {
    redis?.disconnect();
    await cluster?.down();
  });
  const bed = useMonitorBed();

  it('resumes on the promoted replica with exact state and no lost or invented alert', async () => {
    cluster = await startStackRedisCluster(PLAIN_PORT);
    expect(cluster.url).toMatch(/^redis\+cluster:\/\/127\.0\.0\.1:\d+(,127\.0\.0\.1:\d+){5}$/);
    redis = cluster.client();
    const { mon, victim } = await killSlotPrimaryMidStream(cluster, redis, bed);
    mon.child.kill('SIGTERM');
    expect(await mon.exited).toBe(0);
    await expectRejoinsAsReplica(cluster, victim);
  });
});

describe('run, inspect and board on a TLS Redis Cluster with ACL users', () => {
  let cluster: StackRedisCluster | undefined;
  let redis: RedisClient | undefined;
  const actionTopic = uniqueName('actions');
  afterAll(async () => {
    redis?.disconnect();
    await cluster?.down();
    await deleteTopics(actionTopic);
  });
  const bed = useMonitorBed();

  it('the same failover as the least-privileged users; board acknowledges; no password printed', async () => {
    cluster = await startStackRedisCluster(TLS_PORT, { tls: true });
    expect(cluster.url).toMatch(/^rediss\+cluster:\/\/127\.0\.0\.1:\d+(,127\.0\.0\.1:\d+){5}$/);
    const secrets = (['monitor', 'reader', 'admin'] as const).map((u) => cluster!.settings(u).password!);
    redis = cluster.client();
    const { mon } = await killSlotPrimaryMidStream(cluster, redis, bed);

    // /readyz: every primary of the (refreshed) slot map answers again.
    const port = await mon.metricsPort();
    await expect
      .poll(async () => (await fetch(`http://127.0.0.1:${port}/readyz`)).status, { timeout: 20_000 })
      .toBe(200);
    const ready = (await (await fetch(`http://127.0.0.1:${port}/readyz`)).json()) as Record<string, unknown>;
    expect(ready).toMatchObject({ ready: true, redis: true, redisPrimaries: 3, redisSlotsDown: 0 });

    // The read-only user cannot write: the ACL holds on every node.
    const reader = cluster.settings('reader');
    const probe = await run(
      process.execPath,
      [CLI, 'inspect', '--state-prefix', `${bed.prefix}-nothing-here`],
      { env: { ...process.env, STREAMFENCE_REDIS_URL: '', ...cluster.env('reader') } },
    ).catch((e: { stdout: string; stderr: string }) => e);
    expect(probe.stderr).not.toMatch(/ready check|INFO command/);
    expect(reader.username).toBe('reader');

    // board as the monitor user: serves the monitor's alerts and keeps an acknowledgement in the cluster.
    await createTopic(actionTopic, 1);
    const board = spawn(
      process.execPath,
      [
        CLI,
        'board',
        ...['--brokers', kafkaBrokers().join(','), '--alert-topic', bed.alertTopic],
        ...['--action-topic', actionTopic, '--state-prefix', bed.prefix, '--port', '0'],
        ...['--redis', cluster.url],
      ],
      { env: { ...process.env, ...cluster.env('monitor') } },
    );
    let boardLog = '';
    board.stdout.on('data', (c) => (boardLog += String(c)));
    board.stderr.on('data', (c) => (boardLog += String(c)));
    try {
      await expect
        .poll(() => /board at (http:\/\/\S+?)\/?\n/.exec(boardLog)?.[1], { timeout: 60_000 })
        .toBeTruthy();
      const url = /board at (http:\/\/\S+?)\/?\n/.exec(boardLog)![1];
      // The open alerts the board rebuilt from the monitor's alert topic.
      const listed = async () =>
        ((await (await fetch(`${url}/api/alerts`)).json()) as { id: string }[]).map((a) => a.id);
      await expect.poll(async () => (await listed()).length, { timeout: 30_000 }).toBeGreaterThan(0);
      const open = { id: (await listed())[0] };
      expect((await readAlertEvents(bed.alertTopic)).some((e) => e.id === open.id)).toBe(true);
      const ack = await fetch(`${url}/api/alerts/${open.id}/acknowledge`, {
        method: 'POST',
        headers: { 'content-type': 'application/json' },
        body: JSON.stringify({ by: 'Ilse Brandvoort' }),
      });
      expect(ack.status, await ack.clone().text()).toBe(200);
      expect(Object.keys(await redis.hgetall(`${bed.prefix}:board:actions`))).toEqual([`${open.id}|ack`]);
    } finally {
      board.kill('SIGTERM');
      await new Promise((r) => board.once('exit', r));
    }

    mon.child.kill('SIGTERM');
    expect(await mon.exited).toBe(0);
    const printed = [...mon.logs, boardLog, probe.stdout, probe.stderr].join('\n');
    for (const s of secrets) expect(printed).not.toContain(s);
    expect(readFileSync(cluster.env('monitor').STREAMFENCE_REDIS_PASSWORD_FILE, 'utf8').trim()).toBe(
      secrets[0],
    );
  });
});
