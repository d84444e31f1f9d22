/**
 * Live monitor benchmark (needs the local stack: Kafka, and a redis-server binary for a private Redis).
 *  - throughput: readings/s through the monitor (in-process, same code as `streamfence run`) vs a
 *    bare kafkajs consumer reading the same topic in the same run; both timed first to last message;
 *  - Redis commands per 1,000 readings: INFO commandstats delta on a private redis-server;
 *  - restart: time for a fresh monitor to take over 10,000 sensors' checkpoints and catch up;
 *  - latency: reading-to-alert (alert received minus reading time) at a steady 5,000 readings/s.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Kafka, logLevel, type Consumer } from 'kafkajs';
import { Redis } from 'ioredis';
import { parseConfigText, type EngineConfig } from '../../libs/config/config.js';
import type { AlertEvent } from '../../libs/schema/alert-event.js';
import { Engine } from '../../libs/engine/engine.js';
import { parseJsonReading } from '../../libs/engine/reading.js';
import { createLogger, type LogLevel } from '../../services/log.js';
import { createMetrics, type Metrics } from '../../services/metrics/metrics.js';
import { Monitor, type MonitorSettings } from '../../services/monitor/monitor.js';
import { partitionKeys } from '../../services/redis/keys.js';
import { buildKafka, buildRedis } from '../../services/connect/index.js';
import { mulberry32 } from './prng.js';

// Compiled to dist-bench/test/bench/ by the bench runner, or run from test/bench/ with tsx: the
// repository is the nearest folder up with a package.json, and the monitor is its built CLI.
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
const SENSORS = 10_000;
const PER_SENSOR = 20;
const PARTITIONS = 6;
// Each sensor reads every STEP_MS; with 1-minute buckets a bucket closes every 10 readings, still
// ten times more often than a 1-a-minute sensor with the default 2 h buckets (every 120).
const STEP_MS = 6_000;
const BENCH_CONFIG = `defaults: { window: "10m", buckets: 10, minSamples: 10, flatlineAfter: 0 }`;
const LATENCY_CONFIG = `defaults: { window: "10s", buckets: 10, minSamples: 20, flatlineAfter: 0 }`;

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const brokers = () => (process.env.STREAMFENCE_TEST_BROKERS ?? '127.0.0.1:9092').split(',');
const name = (p: string) => `bench-${p}-${process.pid}-${Date.now().toString(36)}`;

async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.once('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => resolve(port));
    });
  });
}

async function privateRedis(): Promise<{ url: string; proc: ChildProcess }> {
  const port = await freePort();
  const proc = spawn(
    'redis-server',
    ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'],
    {
      stdio: 'ignore',
    },
  );
  const url = `redis://127.0.0.1:${port}`;
  for (let i = 0; ; i++) {
    const r = new Redis(url, { lazyConnect: true, maxRetriesPerRequest: 0, retryStrategy: () => null });
    r.on('error', () => {});
    try {
      await r.connect();
      await r.ping();
      r.disconnect();
      break;
    } catch (e) {
      r.disconnect();
      if (i > 50) throw e;
      await sleep(100);
    }
  }
  return { url, proc };
}

async function totalCommands(r: Redis): Promise<{ total: number; byCommand: Record<string, number> }> {
  const info = await r.info('commandstats');
  const byCommand: Record<string, number> = {};
  let total = 0;
  for (const m of info.matchAll(/^cmdstat_([^:]+):calls=(\d+)/gm)) {
    byCommand[m[1]] = Number(m[2]);
    total += Number(m[2]);
  }
  return { total, byCommand };
}

async function produce(kafka: Kafka, topic: string, msgs: { key: string; value: string }[]): Promise<void> {
  const p = kafka.producer();
  await p.connect();
  for (let i = 0; i < msgs.length; i += 5_000) {
    await p.send({ topic, acks: -1, messages: msgs.slice(i, i + 5_000) });
  }
  await p.disconnect();
}

function readings(
  sensors: number,
  perSensor: number,
  t0: number,
  seed: number,
): { key: string; value: string }[] {
  const rnd = mulberry32(seed);
  const out: { key: string; value: string }[] = [];
  for (let k = 0; k < perSensor; k++) {
    for (let i = 0; i < sensors; i++) {
      const sensor = `press-${Math.floor(i / 100)}.line-${i % 100}`;
      const value = 50 + (i % 17) + (rnd() - 0.5) * 2 + (rnd() < 0.01 ? 30 : 0);
      out.push({ key: sensor, value: JSON.stringify({ sensor, ts: t0 + k * STEP_MS, value }) });
    }
  }
  return out;
}

async function waitCheckpointed(
  r: Redis,
  prefix: string,
  group: string,
  topic: string,
  kafka: Kafka,
  timeoutMs: number,
) {
  const admin = kafka.admin();
  await admin.connect();
  const ends = await admin.fetchTopicOffsets(topic);
  await admin.disconnect();
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    let behind = 0;
    for (const e of ends) {
      const stored = await r.get(partitionKeys(prefix, group, topic, e.partition).offset);
      if (BigInt(e.high) > 0n && (stored === null || BigInt(stored) < BigInt(e.high))) behind++;
    }
    if (behind === 0) return;
    if (Date.now() > deadline) throw new Error(`monitor did not catch up on ${topic} within ${timeoutMs} ms`);
    await sleep(20);
  }
}

async function counted(m: Metrics): Promise<number> {
  return (await m.readings.get()).values.reduce((n, v) => n + v.value, 0);
}

/** Bare kafkajs consumer: no parsing, no engine, no Redis; the ceiling for the monitor. */
async function bareConsume(kafka: Kafka, topic: string, total: number): Promise<number> {
  const consumer: Consumer = kafka.consumer({ groupId: name('bare'), maxBytesPerPartition: 1_048_576 });
  await consumer.connect();
  await consumer.subscribe({ topic, fromBeginning: true });
  let n = 0;
  let first = 0;
  const ms = await new Promise<number>((resolve) => {
    void consumer.run({
      eachBatchAutoResolve: true,
      eachBatch: async ({ batch }) => {
        if (first === 0) first = performance.now();
        n += batch.messages.length;
        if (n >= total) resolve(performance.now() - first);
      },
    });
  });
  await consumer.disconnect();
  return ms;
}

function settings(topic: string, prefix: string, group: string, alertTopic: string): MonitorSettings {
  return {
    statePrefix: prefix,
    inputTopic: topic,
    alertTopic,
    rejectedTopic: alertTopic,
    group,
    checkpointMs: 1_000,
    checkpointReadings: 50_000,
    sessionTimeoutMs: 6_000,
    // The bench produces its readings before the monitor starts.
    startFrom: 'earliest',
  };
}

export async function run(): Promise<Record<string, unknown>> {
  const log = createLogger('bench', (process.env.STREAMFENCE_BENCH_LOG ?? 'silent') as LogLevel);
  const kafka = new Kafka({ clientId: name('c'), brokers: brokers(), logLevel: logLevel.NOTHING });
  const mkKafka = () => buildKafka({ brokers: brokers() }, { clientId: name('m'), log });
  const { url, proc } = await privateRedis();
  const admin = kafka.admin();
  await admin.connect();
  const topic = name('in');
  const alertTopic = name('alerts');
  const latTopic = name('lat-in');
  const latAlerts = name('lat-alerts');
  await admin.createTopics({
    waitForLeaders: true,
    topics: [topic, alertTopic, latTopic, latAlerts].map((t) => ({
      topic: t,
      numPartitions: PARTITIONS,
      replicationFactor: 1,
    })),
  });
  const out: Record<string, unknown> = {};
  const probe = new Redis(url);
  try {
    // --- throughput and Redis commands ---
    const msgs = readings(SENSORS, PER_SENSOR, Date.UTC(2026, 4, 1), 1);
    await produce(kafka, topic, msgs);
    const bareMs = await bareConsume(kafka, topic, msgs.length);
    // The engine alone (parse + judge, no Kafka, no Redis): the ceiling the monitor can reach.
    const config0: EngineConfig = parseConfigText(BENCH_CONFIG, 'bench');
    const solo = new Engine(config0);
    const e0 = performance.now();
    for (const m of msgs) {
      const r = parseJsonReading(m.value);
      if (r.ok) solo.process(r.reading);
    }
    const engineMs = performance.now() - e0;

    const config: EngineConfig = parseConfigText(BENCH_CONFIG, 'bench');
    const prefix = name('sf');
    const group = name('g');
    const before = await totalCommands(probe);
    const metrics = createMetrics({ defaultMetrics: false });
    const redis = buildRedis({ url });
    let mon = new Monitor({
      kafka: mkKafka(),
      redis,
      config,
      settings: settings(topic, prefix, group, alertTopic),
      log,
      metrics,
    });
    await mon.start();
    let first = 0;
    for (;;) {
      const n = await counted(metrics);
      if (n > 0 && first === 0) first = performance.now();
      if (n >= msgs.length) break;
      await sleep(5);
    }
    const monitorMs = performance.now() - first;
    await waitCheckpointed(probe, prefix, group, topic, kafka, 30_000);
    const after = await totalCommands(probe);
    const bareRate = msgs.length / (bareMs / 1000);
    const monRate = msgs.length / (monitorMs / 1000);
    out.throughput = {
      readings: msgs.length,
      sensors: SENSORS,
      partitions: PARTITIONS,
      bareKafkajsPerSec: Math.round(bareRate),
      monitorPerSec: Math.round(monRate),
      ratioToBare: Number((monRate / bareRate).toFixed(3)),
      engineOnlyPerSec: Math.round(msgs.length / (engineMs / 1000)),
      ratioToEngineOnly: Number((monRate / (msgs.length / (engineMs / 1000))).toFixed(3)),
    };
    const delta = after.total - before.total;
    const perCommand: Record<string, number> = {};
    for (const [k, v] of Object.entries(after.byCommand)) {
      const d = v - (before.byCommand[k] ?? 0);
      if (d > 0) perCommand[k] = d;
    }
    out.redis = {
      commandsPer1000Readings: Number(((delta / msgs.length) * 1000).toFixed(2)),
      note: 'INFO commandstats on a private redis-server; counts commands run inside Lua scripts, and this benchmark INFO/GET polling',
      byCommand: perCommand,
    };

    // --- restart: a fresh monitor takes over 10,000 sensors and catches up ---
    await mon.stop();
    const more = readings(SENSORS, 1, Date.UTC(2026, 4, 1) + PER_SENSOR * STEP_MS, 2);
    await produce(kafka, topic, more);
    const t0 = performance.now();
    mon = new Monitor({
      kafka: mkKafka(),
      redis,
      config,
      settings: settings(topic, prefix, group, alertTopic),
      log,
      metrics: createMetrics({ defaultMetrics: false }),
    });
    await mon.start();
    await waitCheckpointed(probe, prefix, group, topic, kafka, 50_000);
    out.restart = {
      sensors: SENSORS,
      msToResumeAndCatchUp: Math.round(performance.now() - t0),
      note: 'from start() to every partition checkpointed past 10,000 new readings; includes the consumer group join',
    };
    await mon.stop();

    // --- latency at a steady 5,000 readings/s ---
    // The monitor runs as its own process (the built CLI), as in production, so the load
    // generator here does not share its event loop.
    const cfgDir = mkdtempSync(join(tmpdir(), 'sf-bench-'));
    writeFileSync(join(cfgDir, 'engine.yaml'), LATENCY_CONFIG);
    const latMon = spawn(
      process.execPath,
      [
        CLI,
        'run',
        '--brokers',
        brokers().join(','),
        '--redis',
        url,
        '--state-prefix',
        name('sf'),
        '--input-topic',
        latTopic,
        '--alert-topic',
        latAlerts,
        '--rejected-topic',
        latAlerts,
        '--group',
        name('g'),
        '--config',
        join(cfgDir, 'engine.yaml'),
        '--metrics-port',
        '0',
        '--log-level',
        'warn',
      ],
      { stdio: 'ignore' },
    );
    const alertConsumer = kafka.consumer({ groupId: name('lat-reader') });
    await alertConsumer.connect();
    await alertConsumer.subscribe({ topic: latAlerts, fromBeginning: true });
    const lat: number[] = [];
    let measureFrom = Infinity;
    await alertConsumer.run({
      eachMessage: async ({ message }) => {
        const e = JSON.parse(message.value!.toString()) as AlertEvent;
        const readingTs = Date.parse(e.ts);
        if (readingTs >= measureFrom) lat.push(Date.now() - readingTs);
      },
    });
    await sleep(8_000); // let the monitor start and both consumers join
    const producer = kafka.producer();
    await producer.connect();
    const rnd = mulberry32(3);
    const rate = 5_000;
    const tick = 50; // ms: 250 readings per tick
    const seconds = 20;
    const start = Date.now();
    measureFrom = start + 8_000; // the first seconds warm the baselines and drain the start-up backlog
    let sent = 0;
    while (Date.now() - start < seconds * 1000) {
      const due = Math.floor(((Date.now() - start) / 1000) * rate);
      const batch = [];
      for (; sent < due; sent++) {
        const sensor = `kiln-${sent % 100}`;
        const spike = rnd() < 0.02 ? 25 : 0;
        batch.push({
          key: sensor,
          value: JSON.stringify({ sensor, ts: Date.now(), value: 20 + rnd() + spike }),
        });
      }
      if (batch.length) await producer.send({ topic: latTopic, acks: -1, messages: batch });
      await sleep(tick);
    }
    await sleep(2_000);
    await producer.disconnect();
    await alertConsumer.disconnect();
    if (latMon.exitCode !== null)
      throw new Error(`the monitor under test exited early (code ${latMon.exitCode})`);
    latMon.kill('SIGTERM');
    await new Promise((r) => latMon.once('exit', r));
    lat.sort((a, b) => a - b);
    const q = (p: number) => (lat.length ? lat[Math.min(lat.length - 1, Math.floor(p * lat.length))] : null);
    out.latency = {
      readingsPerSec: Math.round(sent / seconds),
      alertsMeasured: lat.length,
      p50Ms: q(0.5),
      p99Ms: q(0.99),
      note: 'alert received by a consumer minus the reading event time (set at production); includes producer batching (50 ms ticks)',
    };
    redis.disconnect();
  } finally {
    probe.disconnect();
    await admin.deleteTopics({ topics: [topic, alertTopic, latTopic, latAlerts] }).catch(() => undefined);
    await admin.disconnect();
    proc.kill('SIGTERM');
  }
  return out;
}
