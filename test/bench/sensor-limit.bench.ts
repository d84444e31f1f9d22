/**
 * Memory at the sensor limit, live (`npm run bench -- sensor-limit`; runs only when named: it
 * produces a million messages, about 90 MB, to the local Kafka and takes minutes). A producer that
 * puts a counter into the sensor id: IDS distinct ids, one reading each (ISO-8601 `ts`), through
 * the built CLI's `streamfence run` at the default limit (DEFAULT_MAX_SENSORS) with its V8 heap
 * capped at processMemoryBudget's figure, as deploy/k8s runs it. Reports the monitor's peak resident
 * memory (VmHWM) and peak heap (its own metrics endpoint) against that budget, the sensor_limit
 * rejects (counter and rejected topic), readings/s from start to the last checkpoint, and a bare
 * kafkajs consumer of the same topic in the same run as the baseline. Uses the shared Redis under
 * a prefix of its own, and deletes its topics and keys at the end.
 * STREAMFENCE_BENCH_LIMIT_IDS changes the id count (default 1,000,000).
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Kafka, logLevel } from 'kafkajs';
import { Redis } from 'ioredis';
import { DEFAULT_MAX_SENSORS, processMemoryBudget } from '../../libs/engine/sensor-budget.js';
import { createTopicsWithLeaders } from '../../services/connect/topics.js';
import { partitionKeys } from '../../services/redis/keys.js';

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
const CLI = join(repoRoot(HERE), 'dist/services/cli/main.js');
const IDS = Number(process.env.STREAMFENCE_BENCH_LIMIT_IDS ?? 1_000_000);
const PARTITIONS = 6;
const T0 = Date.parse('2026-07-01T06:00:00.000Z');
const MIB = 2 ** 20;

const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));
const brokers = () => (process.env.STREAMFENCE_TEST_BROKERS ?? '127.0.0.1:9092').split(',');
const redisUrl = () => process.env.STREAMFENCE_TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';
const name = (part: string) => `bench-limit-${part}-${process.pid}-${Date.now().toString(36)}`;

/** One reading per id, one millisecond apart: all inside the default 24 h window (no eviction). */
async function produceIds(kafka: Kafka, topic: string): Promise<void> {
  const producer = kafka.producer();
  await producer.connect();
  for (let start = 0; start < IDS; start += 10_000) {
    const messages = [];
    for (let i = start; i < Math.min(IDS, start + 10_000); i++) {
      const sensor = `gateway/seq-${i}`;
      const ts = new Date(T0 + i).toISOString();
      messages.push({ key: sensor, value: JSON.stringify({ sensor, ts, value: 20 + (i % 7) }) });
    }
    await producer.send({ topic, acks: -1, messages });
  }
  await producer.disconnect();
}

/** Bare kafkajs consumer of the whole topic: no parsing, engine, Redis or output. */
async function bareConsume(kafka: Kafka, topic: string): Promise<number> {
  const consumer = kafka.consumer({ groupId: name('bare') });
  await consumer.connect();
  await consumer.subscribe({ topic, fromBeginning: true });
  let seen = 0;
  const started = performance.now();
  await new Promise<void>((resolve) => {
    void consumer.run({
      eachBatch: async ({ batch }) => {
        seen += batch.messages.length;
        if (seen >= IDS) resolve();
      },
    });
  });
  const ms = performance.now() - started;
  await consumer.disconnect();
  return Math.round(IDS / (ms / 1000));
}

function peakResidentMb(pid: number): number | null {
  const match = /VmHWM:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
  return match ? Math.round(Number(match[1]) / 1024) : null;
}

const gauge = (text: string, metric: string): number =>
  Number(new RegExp(`^${metric}(?:\\{[^}]*\\})? (\\S+)$`, 'm').exec(text)?.[1] ?? NaN);

async function endOffsets(kafka: Kafka, topic: string): Promise<{ partition: number; high: string }[]> {
  const admin = kafka.admin();
  await admin.connect();
  const ends = await admin.fetchTopicOffsets(topic);
  await admin.disconnect();
  return ends;
}

/** Runs the monitor until every partition is checkpointed to the end; samples its heap meanwhile. */
async function monitorRun(kafka: Kafka, redis: Redis, names: Record<string, string>) {
  const budget = processMemoryBudget(DEFAULT_MAX_SENSORS);
  const dir = mkdtempSync(join(tmpdir(), 'sf-bench-limit-'));
  const configFile = join(dir, 'engine.yaml');
  writeFileSync(configFile, 'defaults: {}\n');
  const args = [
    'run',
    '--brokers',
    brokers().join(','),
    '--redis',
    redisUrl(),
    '--state-prefix',
    names.prefix,
  ];
  args.push('--input-topic', names.input, '--alert-topic', names.alerts, '--rejected-topic', names.rejected);
  args.push('--group', names.group, '--config', configFile, '--metrics-port', '0', '--log-level', 'info');
  args.push('--start-from', 'earliest');
  const child = spawn(process.execPath, [CLI, ...args], {
    stdio: ['ignore', 'ignore', 'pipe'],
    env: { ...process.env, NODE_OPTIONS: `--max-old-space-size=${budget.heapMiB}` },
  });
  let stderr = '';
  child.stderr.on('data', (chunk: Buffer) => (stderr += chunk.toString()));
  const started = performance.now();
  let port = 0;
  while (port === 0) {
    const match = /"port":(\d+),"msg":"metrics listening/.exec(stderr);
    if (match) port = Number(match[1]);
    else if (child.exitCode !== null || child.signalCode !== null)
      throw new Error(`monitor exited: ${stderr}`);
    else await sleep(50);
  }
  const ends = await endOffsets(kafka, names.input);
  let peakHeap = 0;
  let metrics = '';
  for (;;) {
    if (child.exitCode !== null || child.signalCode !== null)
      throw new Error(`monitor exited (${child.exitCode ?? child.signalCode}): ${stderr.slice(-2000)}`);
    metrics = await fetch(`http://127.0.0.1:${port}/metrics`).then((res) => res.text());
    peakHeap = Math.max(peakHeap, gauge(metrics, 'nodejs_heap_size_used_bytes'));
    let behind = 0;
    for (const end of ends) {
      const stored = await redis.get(
        partitionKeys(names.prefix, names.group, names.input, end.partition).offset,
      );
      if (BigInt(end.high) > 0n && (stored === null || BigInt(stored) < BigInt(end.high))) behind++;
    }
    if (behind === 0) break;
    if (performance.now() - started > 900_000) throw new Error('monitor did not catch up within 15 min');
    await sleep(250);
  }
  const seconds = (performance.now() - started) / 1000;
  const peakResident = peakResidentMb(child.pid!);
  child.kill('SIGTERM');
  await new Promise((resolve) => child.once('exit', resolve));
  return { budget, seconds, peakResident, peakHeap, metrics };
}

export async function run(): Promise<Record<string, unknown>> {
  const kafka = new Kafka({ clientId: name('client'), brokers: brokers(), logLevel: logLevel.NOTHING });
  const redis = new Redis(redisUrl());
  const names = {
    input: name('in'),
    alerts: name('alerts'),
    rejected: name('rejected'),
    group: name('group'),
    prefix: name('sf'),
  };
  const admin = kafka.admin();
  await admin.connect();
  await createTopicsWithLeaders(admin, [
    { topic: names.input, numPartitions: PARTITIONS, replicationFactor: 1 },
    { topic: names.alerts, numPartitions: 1, replicationFactor: 1 },
    { topic: names.rejected, numPartitions: 3, replicationFactor: 1 },
  ]);
  try {
    const load = [loadavg()[0]];
    const produceStarted = performance.now();
    await produceIds(kafka, names.input);
    const produceSeconds = (performance.now() - produceStarted) / 1000;
    const bare = await bareConsume(kafka, names.input);
    const mon = await monitorRun(kafka, redis, names);
    load.push(loadavg()[0]);
    const rejectedOnTopic = (await endOffsets(kafka, names.rejected)).reduce((n, e) => n + Number(e.high), 0);
    const monitorRate = Math.round(IDS / mon.seconds);
    return {
      ids: IDS,
      maxSensors: DEFAULT_MAX_SENSORS,
      budgetMiB: mon.budget,
      peakResidentMiB: mon.peakResident,
      peakHeapUsedMiB: Math.round(mon.peakHeap / MIB),
      sensorLimitRejects: gauge(mon.metrics, 'streamfence_rejected_total\\{reason="sensor_limit"\\}'),
      rejectedTopicMessages: rejectedOnTopic,
      expectedRejects: IDS - DEFAULT_MAX_SENSORS,
      sensorLimitUsedRatio: gauge(mon.metrics, 'streamfence_sensor_limit_used_ratio'),
      monitorSeconds: Math.round(mon.seconds * 10) / 10,
      monitorReadingsPerSecond: monitorRate,
      bareConsumerMessagesPerSecond: bare,
      ratioToBare: Math.round((monitorRate / bare) * 100) / 100,
      produceSeconds: Math.round(produceSeconds * 10) / 10,
      loadAverage: load.map((x) => Math.round(x * 10) / 10),
    };
  } finally {
    await admin.deleteTopics({ topics: [names.input, names.alerts, names.rejected] }).catch(() => undefined);
    await admin.disconnect();
    for (const pattern of [`{${names.prefix}:*`, `${names.prefix}:*`]) {
      const keys = await redis.keys(pattern);
      if (keys.length) await redis.del(...keys);
    }
    redis.disconnect();
  }
}
