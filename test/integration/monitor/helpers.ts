/**
 * Shared pieces of the live-monitor integration tests: a seeded invented data set, producing it,
 * spawning the built CLI as a child process, reading topics back, and the in-process reference
 * (the same Engine code replay uses) to compare against.
 */
import { createServer } from 'node:net';
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { logLevel, type Kafka } from 'kafkajs';
import type { Redis } from 'ioredis';
import type { RedisClient } from '../../../services/connect/index.js';
import { afterAll, expect } from 'vitest';
import { parseConfigText, type EngineConfig } from '../../../libs/config/config.js';
import { Engine } from '../../../libs/engine/engine.js';
import type { Reading } from '../../../libs/engine/reading.js';
import type { AlertEvent } from '../../../libs/schema/alert-event.js';
import { storedSensors } from '../../../services/cli/inspect-state.js';
import { partitionKeys } from '../../../services/redis/keys.js';
import {
  createTopic,
  deleteKeysByPrefix,
  deleteTopics,
  kafkaBrokers,
  kafkaClient,
  redisClient,
  redisUrl,
  uniqueName,
} from '../../harness/services.js';

export const REPO_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../..');
export const CLI = path.join(REPO_ROOT, 'dist/services/cli/main.js');

/** A short window so alerts appear after a few hundred readings per sensor. */
export const TEST_CONFIG_TEXT = `
defaults:
  window: "10m"
  buckets: 10
  minSamples: 20
  clearAfter: 3
  flatlineAfter: 0
`;

export function testConfig(): EngineConfig {
  return parseConfigText(TEST_CONFIG_TEXT, 'test config');
}

export function writeTestConfig(): string {
  const dir = mkdtempSync(path.join(tmpdir(), 'sf-monitor-'));
  const file = path.join(dir, 'engine.yaml');
  writeFileSync(file, TEST_CONFIG_TEXT);
  return file;
}

/** mulberry32: a small seeded generator so every run produces the same invented readings. */
export function seeded(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * Invented plant readings: `sensors` sensors (ids like "kiln-3.temp-07"), one reading a second
 * each, noisy around a per-sensor level, with short spikes now and then that raise and clear
 * alerts. Interleaved in event-time order, as a plant gateway would send them.
 */
export function generateReadings(sensors: number, perSensor: number, seed = 7): Reading[] {
  const rnd = seeded(seed);
  const t0 = Date.UTC(2026, 2, 14, 6, 0, 0);
  const ids = Array.from({ length: sensors }, (_, i) => `kiln-${i % 4}.temp-${String(i).padStart(2, '0')}`);
  const levels = ids.map((_, i) => 100 + i * 7);
  const out: Reading[] = [];
  for (let k = 0; k < perSensor; k++) {
    for (let i = 0; i < sensors; i++) {
      const noise = (rnd() + rnd() + rnd() - 1.5) * 2;
      // A spike of 4 readings every ~150 readings, at a sensor-specific phase.
      const spike = k > 150 && (k + i * 37) % 150 < 4 ? 40 + rnd() * 10 : 0;
      out.push({
        sensor: ids[i],
        ts: t0 + k * 1000 + i,
        value: Math.round((levels[i] + noise + spike) * 1000) / 1000,
      });
    }
  }
  return out;
}

/** The reference: the same readings, in order, through one in-process Engine. */
export function referenceEvents(readings: Reading[], config: EngineConfig): Map<string, AlertEvent[]> {
  const engine = new Engine(config);
  const bySensor = new Map<string, AlertEvent[]>();
  for (const r of readings) {
    const out = engine.process(r);
    for (const e of out.events) {
      const list = bySensor.get(e.sensor) ?? [];
      list.push(e);
      bySensor.set(e.sensor, list);
    }
  }
  return bySensor;
}

export function countBySensor(readings: Reading[]): Map<string, number> {
  const m = new Map<string, number>();
  for (const r of readings) m.set(r.sensor, (m.get(r.sensor) ?? 0) + 1);
  return m;
}

export async function produceReadings(
  kafka: Kafka,
  topic: string,
  readings: Reading[],
  extra: { key: string | null; value: string | Buffer | null }[] = [],
): Promise<void> {
  const producer = kafka.producer({ idempotent: true, maxInFlightRequests: 1 });
  await producer.connect();
  try {
    const msgs = readings.map((r) => ({ key: r.sensor, value: JSON.stringify(r) }));
    const all: { key: string | null; value: string | Buffer | null }[] = [...msgs, ...extra];
    for (let i = 0; i < all.length; i += 2000) {
      await producer.send({ topic, acks: -1, messages: all.slice(i, i + 2000) });
    }
  } finally {
    await producer.disconnect();
  }
}

/** Readings keyed by sensor, each message stamped with its reading time (as a plant gateway would). */
export async function produceStamped(kafka: Kafka, topic: string, readings: Reading[]): Promise<void> {
  const producer = kafka.producer({ idempotent: true, maxInFlightRequests: 1 });
  await producer.connect();
  try {
    for (let i = 0; i < readings.length; i += 2000) {
      const messages = readings
        .slice(i, i + 2000)
        .map((r) => ({ key: r.sensor, value: JSON.stringify(r), timestamp: String(r.ts) }));
      await producer.send({ topic, acks: -1, messages });
    }
  } finally {
    await producer.disconnect();
  }
}

/** Every message on a topic (all partitions), read from the start up to the current end. */
export async function readTopic(
  topic: string,
  kafka: Kafka = kafkaClient(),
): Promise<{ key: string | null; value: Buffer | null; partition: number; timestamp: number }[]> {
  const admin = kafka.admin();
  await admin.connect();
  const ends = await admin.fetchTopicOffsets(topic);
  await admin.disconnect();
  const remaining = new Map(ends.map((e) => [e.partition, BigInt(e.high)]));
  const out: { key: string | null; value: Buffer | null; partition: number; timestamp: number }[] = [];
  const done = () => [...remaining.entries()].every(([, high]) => high <= 0n);
  if (done()) return out;
  const consumer = kafka.consumer({ groupId: uniqueName('reader') });
  await consumer.connect();
  await consumer.subscribe({ topic, fromBeginning: true });
  await new Promise<void>((resolve, reject) => {
    const timer = setTimeout(() => reject(new Error(`timed out reading ${topic}`)), 60_000);
    void consumer.run({
      eachMessage: async ({ partition, message }) => {
        out.push({
          key: message.key?.toString() ?? null,
          value: message.value,
          partition,
          timestamp: Number(message.timestamp),
        });
        const high = remaining.get(partition)!;
        if (BigInt(message.offset) + 1n >= high) remaining.set(partition, 0n);
        if (done()) {
          clearTimeout(timer);
          resolve();
        }
      },
    });
  });
  await consumer.disconnect();
  return out;
}

export async function readAlertEvents(topic: string, kafka?: Kafka): Promise<AlertEvent[]> {
  return (await readTopic(topic, kafka)).map((m) => JSON.parse(m.value!.toString('utf8')) as AlertEvent);
}

export interface MonitorProc {
  child: ChildProcess;
  logs: string[];
  exited: Promise<number | null>;
  /** Resolves with the first log line matching re. */
  waitForLog(re: RegExp, timeoutMs?: number): Promise<string>;
  metricsPort(): Promise<number>;
}

export interface MonitorArgs {
  topic: string;
  alertTopic: string;
  rejectedTopic: string;
  group: string;
  prefix: string;
  configFile: string;
  extra?: string[];
  env?: Record<string, string>;
}

/** Fresh input/alert/rejected topic, group and state-prefix names no other test uses. */
export function uniqueMonitorNames() {
  return {
    topic: uniqueName('readings'),
    alertTopic: uniqueName('alerts'),
    rejectedTopic: uniqueName('rejected'),
    group: uniqueName('group'),
    prefix: uniqueName('sf'),
  };
}

export interface MonitorBed extends ReturnType<typeof uniqueMonitorNames> {
  /** A client for the shared test Redis. */
  redis: Redis;
  /** Every monitor spawned by spawn(); afterAll SIGKILLs the ones still running. */
  monitors: MonitorProc[];
  /** Creates the three topics (partition counts: input, alerts, rejected). */
  createTopics(partitions?: [number, number, number]): Promise<void>;
  /** spawnMonitor arguments for this bed's topics, group and prefix. */
  args(configFile: string, more?: Pick<MonitorArgs, 'extra' | 'env'>): MonitorArgs;
  /** spawnMonitor(args(...)), recorded in monitors. */
  spawn(configFile: string, more?: Pick<MonitorArgs, 'extra' | 'env'>): MonitorProc;
}

/**
 * The common test bed of a live-monitor test: unique names, a Redis client and a list of spawned
 * monitors. Call it in a describe block: it registers an afterAll that SIGKILLs leftover monitors,
 * deletes the prefix's keys (hash-tagged `{prefix:` and plain `prefix:`), disconnects Redis and
 * deletes the topics if createTopics() made them.
 */
export function useMonitorBed(): MonitorBed {
  const names = uniqueMonitorNames();
  const redis = redisClient();
  const monitors: MonitorProc[] = [];
  let topicsCreated = false;
  const args = (configFile: string, more: Pick<MonitorArgs, 'extra' | 'env'> = {}): MonitorArgs => ({
    ...names,
    configFile,
    ...more,
  });

  afterAll(async () => {
    for (const m of monitors)
      if (m.child.exitCode === null && m.child.signalCode === null) m.child.kill('SIGKILL');
    await deleteKeysByPrefix(redis, `{${names.prefix}:`);
    await deleteKeysByPrefix(redis, `${names.prefix}:`);
    redis.disconnect();
    if (topicsCreated) await deleteTopics(names.topic, names.alertTopic, names.rejectedTopic);
  });

  return {
    ...names,
    redis,
    monitors,
    async createTopics([input, alerts, rejected] = [6, 3, 1]) {
      topicsCreated = true;
      await createTopic(names.topic, input);
      await createTopic(names.alertTopic, alerts);
      await createTopic(names.rejectedTopic, rejected);
    },
    args,
    spawn(configFile, more) {
      const m = spawnMonitor(args(configFile, more));
      monitors.push(m);
      return m;
    },
  };
}

export function spawnMonitor(a: MonitorArgs): MonitorProc {
  const args = [
    CLI,
    'run',
    '--brokers',
    kafkaBrokers().join(','),
    '--redis',
    redisUrl(),
    '--state-prefix',
    a.prefix,
    '--input-topic',
    a.topic,
    '--alert-topic',
    a.alertTopic,
    '--rejected-topic',
    a.rejectedTopic,
    '--group',
    a.group,
    '--config',
    a.configFile,
    '--metrics-port',
    '0',
    '--checkpoint-ms',
    '200',
    '--checkpoint-readings',
    '2000',
    '--log-level',
    'debug',
    '--session-timeout-ms',
    '6000',
    // The tests produce their readings before or while the monitor starts: read them all. (A
    // later --start-from in extra wins.)
    '--start-from',
    'earliest',
    ...(a.extra ?? []),
  ];
  const child = spawn(process.execPath, args, {
    stdio: ['ignore', 'pipe', 'pipe'],
    env: { ...process.env, ...a.env },
  });
  const logs: string[] = [];
  const waiters: { re: RegExp; resolve: (l: string) => void }[] = [];
  let buf = '';
  child.stderr!.on('data', (d: Buffer) => {
    buf += d.toString('utf8');
    let i;
    while ((i = buf.indexOf('\n')) >= 0) {
      const line = buf.slice(0, i);
      buf = buf.slice(i + 1);
      logs.push(line);
      if (process.env.STREAMFENCE_TEST_MONITOR_LOG === '1')
        process.stderr.write(`[monitor ${child.pid}] ${line}\n`);
      for (const w of [...waiters]) {
        if (w.re.test(line)) {
          waiters.splice(waiters.indexOf(w), 1);
          w.resolve(line);
        }
      }
    }
  });
  child.stdout!.resume();
  const exited = new Promise<number | null>((resolve) => child.on('exit', (code) => resolve(code)));
  const waitForLog = (re: RegExp, timeoutMs = 30_000) => {
    const hit = logs.find((l) => re.test(l));
    if (hit) return Promise.resolve(hit);
    return new Promise<string>((resolve, reject) => {
      const t = setTimeout(
        () =>
          reject(
            new Error(
              `no log line matching ${re} within ${timeoutMs} ms; last lines:\n${logs.slice(-15).join('\n')}`,
            ),
          ),
        timeoutMs,
      );
      waiters.push({
        re,
        resolve: (l) => {
          clearTimeout(t);
          resolve(l);
        },
      });
    });
  };
  return {
    child,
    logs,
    exited,
    waitForLog,
    metricsPort: async () => (JSON.parse(await waitForLog(/metrics listening/)) as { port: number }).port,
  };
}

export const quietKafka = () => logLevel.NOTHING;

/**
 * Runs a deploy/local script (stack-up.sh, stack-down.sh) with extra env, for a test that starts
 * servers of its own in a stack folder of its own; rejects with the script's stderr on failure.
 */
export function runStackScript(script: string, env: NodeJS.ProcessEnv, args: string[] = []): Promise<void> {
  return new Promise((resolve, reject) => {
    const child = spawn('bash', [path.join(REPO_ROOT, 'deploy/local', script), ...args], {
      env: { ...process.env, ...env },
      stdio: ['ignore', 'ignore', 'pipe'],
    });
    let err = '';
    child.stderr!.on('data', (d: Buffer) => (err += d.toString()));
    child.on('error', reject);
    child.on('exit', (code) =>
      code === 0 ? resolve() : reject(new Error(`${script} exited ${code}: ${err}`)),
    );
  });
}

/** Waits until the Redis checkpoints of every partition reach the topic's end offsets. */
export async function waitCheckpointedToEnd(
  redis: RedisClient,
  prefix: string,
  group: string,
  topic: string,
  timeoutMs = 60_000,
  kafka: Kafka = kafkaClient(),
): Promise<void> {
  const admin = kafka.admin();
  await admin.connect();
  const ends = await admin.fetchTopicOffsets(topic);
  await admin.disconnect();
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    let behind = 0;
    for (const e of ends) {
      const stored = await redis.get(partitionKeys(prefix, group, topic, e.partition).offset);
      const end = BigInt(e.high);
      if (end > 0n && (stored === null || BigInt(stored) < end)) behind++;
    }
    if (behind === 0) return;
    if (Date.now() > deadline)
      throw new Error(`${behind} partitions not checkpointed to the end within ${timeoutMs} ms`);
    await new Promise((r) => setTimeout(r, 200));
  }
}

/** sensor -> lifetime readings, from the checkpoints in Redis. */
export async function storedSeen(
  redis: RedisClient,
  prefix: string,
  group: string,
  topic: string,
  config: EngineConfig,
) {
  const seen = new Map<string, number>();
  for await (const s of storedSensors(redis, prefix, { group, topic, config }))
    seen.set(s.state.sensor, s.state.seen);
  return seen;
}

/** Compare per sensor: same ids, states and severities in the same order. */
export function eventsBySensor(events: AlertEvent[]): Map<string, AlertEvent[]> {
  const m = new Map<string, AlertEvent[]>();
  for (const e of events) {
    const l = m.get(e.sensor) ?? [];
    l.push(e);
    m.set(e.sensor, l);
  }
  return m;
}

export const summary = (events: AlertEvent[] | undefined) =>
  (events ?? []).map((e) => `${e.id}:${e.state}:${e.severity}`);

export const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Where a monitor keeps its state: the Redis it checkpoints to, its prefix, group and input topic. */
export interface StateLocation {
  redis: RedisClient;
  prefix: string;
  group: string;
  topic: string;
}

/** Every sensor's stored lifetime count equals the number of readings produced for it. */
export async function expectExactState(at: StateLocation, readings: Reading[], config: EngineConfig) {
  const seen = await storedSeen(at.redis, at.prefix, at.group, at.topic, config);
  expect(Object.fromEntries(seen)).toEqual(Object.fromEntries(countBySensor(readings)));
}

/**
 * Every alert event of the reference (`${id}:${state}:${ts}`) is on the alert topic; duplicates are
 * allowed. With onlyReferenceEvents, every live event must also be one of the reference's (a
 * duplicate, never an invented one), and no sensor without reference events has any. With inOrder,
 * each sensor's events, duplicates dropped, come in the reference's order (a sensor's events share
 * one partition, read in offset order). Returns how many reference events were checked.
 */
export async function expectNoLostAlerts(
  alertTopic: string,
  readings: Reading[],
  config: EngineConfig,
  {
    onlyReferenceEvents = false,
    inOrder = false,
    kafka,
  }: { onlyReferenceEvents?: boolean; inOrder?: boolean; kafka?: Kafka } = {},
): Promise<number> {
  const key = (e: AlertEvent) => `${e.id}:${e.state}:${e.ts}`;
  const reference = referenceEvents(readings, config);
  const live = eventsBySensor(await readAlertEvents(alertTopic, kafka));
  let checked = 0;
  for (const [sensor, events] of reference) {
    const got = live.get(sensor) ?? [];
    const ids = new Set(got.map(key));
    for (const e of events) {
      checked++;
      expect(ids.has(key(e)), `${sensor} ${e.id} ${e.state} ${e.ts}`).toBe(true);
    }
    if (onlyReferenceEvents) {
      const ref = new Set(events.map(key));
      for (const e of got) expect(ref.has(key(e))).toBe(true);
    }
    if (inOrder) expect([...ids], `order of ${sensor}'s alert events`).toEqual(events.map(key));
  }
  if (onlyReferenceEvents)
    expect(
      [...live.keys()].filter((sensor) => !reference.has(sensor)),
      'sensors with alert events the reference does not raise',
    ).toEqual([]);
  return checked;
}

/** A TCP port that was free a moment ago on 127.0.0.1 (for a dedicated server in a test). */
export async function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = createServer();
    s.once('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as { port: number }).port;
      s.close(() => resolve(port));
    });
  });
}

/** One JSON log line of a monitor (the fields the outage tests read). */
export interface MonitorLogEntry {
  level: string;
  msg: string;
  dependency?: 'kafka' | 'redis';
  cause?: string;
  attempt?: number;
  delayMs?: number | null;
}

/** The monitor's JSON log lines, parsed (anything else on stderr is skipped). */
export function monitorLogEntries(logs: string[]): MonitorLogEntry[] {
  return logs.filter((l) => l.startsWith('{')).map((l) => JSON.parse(l) as MonitorLogEntry);
}

/** The sum of `streamfence_backoff_total` per cause for one dependency, from a /metrics text. */
export function backoffByCause(metricsText: string, dependency: 'kafka' | 'redis'): Record<string, number> {
  const out: Record<string, number> = {};
  const re = new RegExp(
    `^streamfence_backoff_total\\{dependency="${dependency}",cause="(\\w+)"\\} (\\S+)$`,
    'gm',
  );
  for (const m of metricsText.matchAll(re)) out[m[1]] = Number(m[2]);
  return out;
}
