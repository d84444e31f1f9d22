/**
 * Redis Cluster slot failover (`npm run bench -- redis-failover`; only when named, never in a full
 * `npm run bench`): a 3-primary, 3-replica Redis Cluster of the bench's own
 * (test/support/redis-cluster.ts: `deploy/local/stack-up.sh --redis-cluster` in a stack folder under
 * test-artifacts/, cluster-node-timeout 2000), the local stack's Kafka. Each run makes fresh topics,
 * starts `streamfence run` (the built CLI, --checkpoint-ms 200: the resolution) on the cluster,
 * streams readings steadily (ISO-8601 times, every sensor every 100 ms), SIGKILLs the primary that
 * serves partition 0's checkpoint slot and reports, from the kill:
 *  - promotedMs: a replica is primary of the slot in CLUSTER NODES (polled every 50 ms);
 *  - writableMs: a SET to a key of that slot, through a client with the monitor's settings
 *    (buildRedis), succeeds again (tried in a loop, the by-hand method of the earlier figure);
 *  - slotStallMs: the monitor's first checkpoint of partition 0 after the kill;
 *  - otherStallMs: the longest time without a checkpoint of a partition whose slot is on a live
 *    primary (null when all share the victim), from 5 s before the kill to 10 s after partition 0
 *    resumed: what holds the whole monitor (checkpoints and batches take turns) shows here;
 *  - longestGapMs: the same over every partition's checkpoint lines together;
 *  - redisRetries: the monitor's redis retry lines in that time.
 * The killed node is restarted (stack-up again: it rejoins as a replica) before the next run.
 * Runs: STREAMFENCE_BENCH_REDIS_FAILOVER_RUNS (default 3). Ports (below Linux's ephemeral range):
 * STREAMFENCE_BENCH_REDIS_FAILOVER_PORT (default 21200: nodes 21200-21205, bus 31200-31205).
 * Kafka: STREAMFENCE_BROKERS or STREAMFENCE_TEST_BROKERS (.stack/env; run `npm run stack:up`).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, writeFileSync } from 'node:fs';
import { loadavg } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Kafka, logLevel, type Producer } from 'kafkajs';
import { buildRedis, createTopicsWithLeaders } from '../../services/connect/index.js';
import { partitionTag } from '../../services/redis/keys.js';
import { startRedisClusterStack, type StackRedisCluster } from '../support/redis-cluster.js';

/** Only when named (`npm run bench -- redis-failover`): it starts six Redis nodes and takes minutes. */
export const onlyWhenNamed = true;

const HERE = dirname(fileURLToPath(import.meta.url));
function repoRoot(dir: string): string {
  while (!existsSync(join(dir, 'package.json'))) {
    const up = dirname(dir);
    if (up === dir) throw new Error(`no package.json above ${HERE}`);
    dir = up;
  }
  return dir;
}
const REPO = repoRoot(HERE);
const CLI = join(REPO, 'dist/services/cli/main.js');
const RUNS = Number(process.env.STREAMFENCE_BENCH_REDIS_FAILOVER_RUNS ?? 3);
const BASE_PORT = Number(process.env.STREAMFENCE_BENCH_REDIS_FAILOVER_PORT ?? 21200);
const BROKERS = (
  process.env.STREAMFENCE_BROKERS ??
  process.env.STREAMFENCE_TEST_BROKERS ??
  '127.0.0.1:9092'
).split(',');
const PLAIN_REDIS = process.env.STREAMFENCE_TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';
const INPUT_PARTITIONS = 4;
const SENSORS = 24;
const SEND_GAP_MS = 100;
const CONFIG = `defaults: { window: "10m", buckets: 10, minSamples: 20, clearAfter: 3, flatlineAfter: 0 }\n`;

const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

interface LogEntry {
  time: number;
  msg: string;
  partition?: number;
  dependency?: string;
}

interface MonitorChild {
  child: ChildProcess;
  entries: LogEntry[];
}

interface Names {
  input: string;
  alerts: string;
  rejected: string;
  group: string;
  prefix: string;
}

function namesFor(run: number): Names {
  const id = `${process.pid}-${Date.now().toString(36)}-${run}`;
  return {
    input: `bench-rf-in-${id}`,
    alerts: `bench-rf-alerts-${id}`,
    rejected: `bench-rf-rejected-${id}`,
    group: `bench-rf-${id}`,
    prefix: `bench-rf-${id}`,
  };
}

function spawnMonitor(names: Names, url: string, configFile: string): MonitorChild {
  const child = spawn(
    process.execPath,
    [
      CLI,
      'run',
      ...['--brokers', BROKERS.join(','), '--redis', url, '--state-prefix', names.prefix],
      ...['--input-topic', names.input, '--alert-topic', names.alerts, '--rejected-topic', names.rejected],
      ...['--group', names.group, '--config', configFile, '--metrics-port', '0'],
      ...['--checkpoint-ms', '200', '--log-level', 'debug', '--start-from', 'earliest'],
    ],
    { stdio: ['ignore', 'ignore', 'pipe'] },
  );
  const entries: LogEntry[] = [];
  let buffered = '';
  child.stderr!.on('data', (d: Buffer) => {
    buffered += d.toString('utf8');
    const lines = buffered.split('\n');
    buffered = lines.pop() ?? '';
    for (const line of lines) {
      try {
        const o = JSON.parse(line) as { time: string } & Omit<LogEntry, 'time'>;
        entries.push({ ...o, time: Date.parse(o.time) });
      } catch {
        // not a JSON line (the banner)
      }
    }
  });
  return { child, entries };
}

/** Every sensor every SEND_GAP_MS, one send per tick, keyed by sensor, until stopped. */
async function streamUntil(producer: Producer, topic: string, stop: { done: boolean }): Promise<void> {
  const start = Date.UTC(2026, 6, 14, 5, 0, 0);
  for (let step = 0; !stop.done; step++) {
    const messages = Array.from({ length: SENSORS }, (_, i) => {
      const wobble = Math.sin(step / 7 + i) * 2 + ((step * 31 + i * 17) % 11) / 5;
      const reading = {
        sensor: `dryer-${i % 4}.outlet-temp-${String(i).padStart(2, '0')}`,
        ts: new Date(start + step * 1000).toISOString().replace('Z', '+02:00'),
        value: Math.round((80 + i * 3 + wobble) * 100) / 100,
      };
      return { key: reading.sensor, value: JSON.stringify(reading) };
    });
    await producer.send({ topic, acks: -1, messages });
    await sleep(SEND_GAP_MS);
  }
}

/** The first time `check` returns true, polled every `everyMs`, or null after timeoutMs. */
async function firstTime(check: () => Promise<boolean>, everyMs: number, timeoutMs = 60_000) {
  const deadline = Date.now() + timeoutMs;
  while (Date.now() < deadline) {
    if (await check().catch(() => false)) return Date.now();
    await sleep(everyMs);
  }
  return null;
}

/** The first checkpoint line of `partition` after `after`, waited for up to 60 s. */
async function firstCheckpoint(mon: MonitorChild, partition: number, after: number): Promise<number> {
  const at = await firstTime(
    async () =>
      mon.entries.some((e) => e.msg === 'checkpoint' && e.partition === partition && e.time > after),
    50,
  );
  if (at === null) throw new Error(`partition ${partition} not checkpointed within 60 s of the kill`);
  return mon.entries.find((e) => e.msg === 'checkpoint' && e.partition === partition && e.time > after)!.time;
}

interface RunResult {
  victimPort: number;
  partitionsOnVictim: number[];
  promotedMs: number | null;
  writableMs: number | null;
  slotStallMs: number;
  otherStallMs: number | null;
  longestGapMs: number;
  redisRetries: number;
  loadAverage1m: number;
}

/** One run: fresh topics and monitor, steady input, SIGKILL the slot's primary, measure, restart it. */
async function oneRun(cluster: StackRedisCluster, kafka: Kafka, run: number): Promise<RunResult> {
  const names = namesFor(run);
  const admin = kafka.admin();
  await admin.connect();
  await createTopicsWithLeaders(admin, [
    { topic: names.input, numPartitions: INPUT_PARTITIONS },
    { topic: names.alerts, numPartitions: 2 },
    { topic: names.rejected, numPartitions: 1 },
  ]);
  const configFile = join(cluster.dir, `engine-${run}.yaml`);
  writeFileSync(configFile, CONFIG);
  const mon = spawnMonitor(names, cluster.url, configFile);
  const producer = kafka.producer({ idempotent: true, maxInFlightRequests: 1 });
  await producer.connect();
  const stop = { done: false };
  const streaming = streamUntil(producer, names.input, stop);
  const checks = cluster.client();
  const probe = buildRedis(cluster.settings('monitor'));
  try {
    // Steady state: every partition has checkpointed at least a few times.
    for (let p = 0; p < INPUT_PARTITIONS; p++) await firstCheckpoint(mon, p, Date.now() + 2_000);
    const slotOf = async (p: number) =>
      Number(await checks.cluster('KEYSLOT', partitionTag(names.prefix, names.group, names.input, p)));
    const slots = await Promise.all(Array.from({ length: INPUT_PARTITIONS }, (_, p) => slotOf(p)));
    const victim = (await cluster.primaryOfSlot(cluster.ports[0], slots[0]))!;
    const witness = cluster.ports.find((p) => p !== victim)!;
    const owners = await Promise.all(slots.map((s) => cluster.primaryOfSlot(witness, s)));
    const onVictim = owners.flatMap((o, p) => (o === victim ? [p] : []));
    const probeKey = `${partitionTag(names.prefix, names.group, names.input, 0)}:bench-probe`;
    await probe.set(probeKey, 'before');

    const loadAverage1m = loadavg()[0];
    const killedAt = Date.now();
    process.kill(cluster.pidOf(victim), 'SIGKILL');
    const [promotedAt, writableAt, slotResumedAt] = await Promise.all([
      firstTime(async () => {
        const p = await cluster.primaryOfSlot(witness, slots[0]);
        return p !== null && p !== victim;
      }, 50),
      firstTime(async () => (await probe.set(probeKey, String(Date.now()))) === 'OK', 100),
      firstCheckpoint(mon, 0, killedAt),
    ]);
    await sleep(10_000);
    const windowEnd = slotResumedAt + 10_000;
    const longestGap = (partitions: number[]) => {
      const times = [
        killedAt - 5_000,
        ...mon.entries
          .filter((e) => e.msg === 'checkpoint' && partitions.includes(e.partition ?? -1))
          .map((e) => e.time)
          .filter((t) => t > killedAt - 5_000 && t <= windowEnd),
        windowEnd,
      ].sort((a, b) => a - b);
      return Math.max(...times.slice(1).map((t, i) => t - times[i]));
    };
    const all = Array.from({ length: INPUT_PARTITIONS }, (_, p) => p);
    const others = all.filter((p) => !onVictim.includes(p));
    const retries = mon.entries.filter(
      (e) => e.time >= killedAt && e.time <= slotResumedAt && e.dependency === 'redis',
    ).length;
    await cluster.up();
    return {
      victimPort: victim,
      partitionsOnVictim: onVictim,
      promotedMs: promotedAt === null ? null : promotedAt - killedAt,
      writableMs: writableAt === null ? null : writableAt - killedAt,
      slotStallMs: slotResumedAt - killedAt,
      otherStallMs: others.length === 0 ? null : longestGap(others),
      longestGapMs: longestGap(all),
      redisRetries: retries,
      loadAverage1m: Math.round(loadAverage1m * 10) / 10,
    };
  } finally {
    stop.done = true;
    await streaming.catch(() => undefined);
    await producer.disconnect().catch(() => undefined);
    mon.child.kill('SIGTERM');
    await new Promise((resolve) =>
      mon.child.exitCode !== null ? resolve(null) : mon.child.once('exit', resolve),
    );
    checks.disconnect();
    probe.disconnect();
    await admin.deleteTopics({ topics: [names.input, names.alerts, names.rejected] }).catch(() => undefined);
    await admin.disconnect();
  }
}

const spread = (values: (number | null)[]) => {
  const sorted = values.filter((v): v is number => v !== null).sort((a, b) => a - b);
  return sorted.length === 0
    ? null
    : { min: sorted[0], median: sorted[Math.floor(sorted.length / 2)], max: sorted[sorted.length - 1] };
};

export async function run(): Promise<Record<string, unknown>> {
  const parentDir = join(REPO, 'test-artifacts', 'bench-stacks');
  mkdirSync(parentDir, { recursive: true });
  process.stderr.write(`redis-failover: starting a Redis Cluster on ${BASE_PORT}-${BASE_PORT + 5}\n`);
  const cluster = await startRedisClusterStack({
    basePort: BASE_PORT,
    kafkaPort: /:(\d+)$/.exec(BROKERS[0])?.[1] ?? '9092',
    redisUrl: PLAIN_REDIS,
    parentDir,
  });
  const kafka = new Kafka({ clientId: 'bench-redis-failover', brokers: BROKERS, logLevel: logLevel.NOTHING });
  const runs: RunResult[] = [];
  try {
    for (let i = 0; i < RUNS; i++) {
      const result = await oneRun(cluster, kafka, i);
      process.stderr.write(`redis-failover: run ${i + 1}: ${JSON.stringify(result)}\n`);
      runs.push(result);
    }
  } finally {
    await cluster.down();
  }
  return {
    runs,
    promotedMs: spread(runs.map((r) => r.promotedMs)),
    writableMs: spread(runs.map((r) => r.writableMs)),
    slotStallMs: spread(runs.map((r) => r.slotStallMs)),
    otherStallMs: spread(runs.map((r) => r.otherStallMs)),
    longestGapMs: spread(runs.map((r) => r.longestGapMs)),
    clusterNodeTimeoutMs: 2_000,
    note: 'times from the SIGKILL; checkpoints every 200 ms (the resolution); the shared machine',
  };
}
