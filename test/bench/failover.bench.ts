/**
 * Failover pause (`npm run bench -- failover`; only when named, never in a full `npm run bench`):
 * a three-broker KRaft cluster of the bench's own (deploy/local/stack-up.sh --brokers 3 in a stack
 * folder of its own, with its own Redis), replication 3, min.insync.replicas 2. Each run makes
 * fresh topics, starts `streamfence run` (the built CLI), streams readings as a plant gateway does
 * (test/support/kafka-gateway.ts), SIGKILLs one broker and reports
 *  - input pause: SIGKILL to the first checkpoint past a reading of the watched input partition
 *    (one the dead broker led) that was sent after the kill (the monitor judged it; checkpoints
 *    every 200 ms, the resolution);
 *  - alert pause: SIGKILL to the first alert event appended (broker LogAppendTime) on the alert
 *    partition the dead broker led, with the longest gap between appends there in the 5 s before
 *    the kill (the figure's resolution: alerts are raised every few hundred milliseconds);
 *  - the phases in between (`phases`): the partitions' new leader in the survivors' metadata
 *    (polled every 200 ms), the gateway's first acknowledged send, the monitor's first fetch of a
 *    reading sent after the kill (its debug 'batch' line), the checkpoint, the alert append;
 * then restarts the broker and waits until every replica is in sync again. The broker killed is
 * the leader of the busiest input partition that the group's coordinator does not lead, or the
 * coordinator itself (STREAMFENCE_BENCH_FAILOVER_KILL: leader, coordinator, or alternate, the
 * default). The machine's load average is reported with each run, the monitor's log lines between
 * the kill and the resume by message (count, first time), and each run's whole monitor log is
 * kept in test-artifacts/bench-failover/. Runs: STREAMFENCE_BENCH_FAILOVER_RUNS (default 3); the
 * monitor's --session-timeout-ms: STREAMFENCE_BENCH_FAILOVER_SESSION_MS (default: the monitor's).
 * Ports (all below Linux's ephemeral range): STREAMFENCE_BENCH_FAILOVER_PORT (default 20592:
 * brokers 20592-20594, controllers 20692-20694, Redis 20600).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import {
  appendFileSync,
  existsSync,
  mkdirSync,
  mkdtempSync,
  readFileSync,
  rmSync,
  writeFileSync,
} from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Kafka, logLevel, type Admin } from 'kafkajs';
import type { Reading } from '../../libs/engine/reading.js';
import { createTopicsWithLeaders } from '../../services/connect/topics.js';
import { KafkaGateway } from '../support/kafka-gateway.js';
import { mulberry32 } from './prng.js';

/** Only when named (`npm run bench -- failover`): it starts three brokers and takes minutes. */
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
const RUNS = Number(process.env.STREAMFENCE_BENCH_FAILOVER_RUNS ?? 3);
/** The monitor's --session-timeout-ms (STREAMFENCE_BENCH_FAILOVER_SESSION_MS); unset: its default. */
const SESSION_TIMEOUT_MS = process.env.STREAMFENCE_BENCH_FAILOVER_SESSION_MS
  ? Number(process.env.STREAMFENCE_BENCH_FAILOVER_SESSION_MS)
  : null;
type Victim = 'leader' | 'coordinator';
/**
 * Which broker each run kills (STREAMFENCE_BENCH_FAILOVER_KILL): `leader` (an input partition's
 * leader that is not the group coordinator), `coordinator`, or `alternate` (the default: leader,
 * coordinator, leader, ...). The two pause for different reasons (README, Failover pause).
 */
const KILL = process.env.STREAMFENCE_BENCH_FAILOVER_KILL ?? 'alternate';
if (!['leader', 'coordinator', 'alternate'].includes(KILL))
  throw new Error(`STREAMFENCE_BENCH_FAILOVER_KILL=${KILL}: use leader, coordinator or alternate`);
const victimOf = (run: number): Victim =>
  KILL === 'alternate' ? (run % 2 === 0 ? 'leader' : 'coordinator') : (KILL as Victim);
const BASE_PORT = Number(process.env.STREAMFENCE_BENCH_FAILOVER_PORT ?? 20592);
const BROKERS = [0, 1, 2].map((i) => `127.0.0.1:${BASE_PORT + i}`);
const REDIS_PORT = BASE_PORT + 8;
const REDIS_URL = `redis://127.0.0.1:${REDIS_PORT}`;
const INPUT_PARTITIONS = 6;
const ALERT_PARTITIONS = 3;
const SENSORS = 30;
/** Readings per send and the wait between one partition's sends: about 1,200 readings/s in all. */
const CHUNK = 30;
const GAP_MS = 150;
/** The monitor's config: a short window so alerts are raised within seconds of the start. */
const CONFIG = `defaults: { window: "10m", buckets: 10, minSamples: 20, clearAfter: 3, flatlineAfter: 0 }\n`;

const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

/** Runs a deploy/local script with the bench's stack env; rejects with its stderr. */
function stackScript(script: string, env: NodeJS.ProcessEnv, args: string[]): Promise<void> {
  return new Promise((resolve, reject) => {
    const child = spawn('bash', [join(REPO, 'deploy/local', script), ...args], {
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

/** The spawned monitor and its parsed JSON log lines. */
interface MonitorChild {
  child: ChildProcess;
  entries: {
    time: number;
    level: number;
    msg: string;
    partition?: number;
    offset?: string;
    /** A 'batch' line's last offset. */
    last?: string;
  }[];
}

/** Where each run's whole monitor log goes (debug lines included), for a closer look. */
const LOG_DIR = join(REPO, 'test-artifacts', 'bench-failover');

function spawnMonitor(names: Names, configFile: string, run: number): MonitorChild {
  const child = spawn(
    process.execPath,
    [
      CLI,
      'run',
      ...['--brokers', BROKERS.join(','), '--redis', REDIS_URL, '--state-prefix', names.prefix],
      ...['--input-topic', names.input, '--alert-topic', names.alerts, '--rejected-topic', names.rejected],
      ...['--group', names.group, '--config', configFile, '--metrics-port', '0'],
      ...['--checkpoint-ms', '200', '--log-level', 'debug', '--start-from', 'earliest'],
      ...(SESSION_TIMEOUT_MS === null ? [] : ['--session-timeout-ms', String(SESSION_TIMEOUT_MS)]),
    ],
    { stdio: ['ignore', 'ignore', 'pipe'] },
  );
  const entries: MonitorChild['entries'] = [];
  let buffered = '';
  mkdirSync(LOG_DIR, { recursive: true });
  const logFile = join(LOG_DIR, `run-${run + 1}-monitor.ndjson`);
  writeFileSync(logFile, '');
  child.stderr!.on('data', (d: Buffer) => {
    appendFileSync(logFile, d);
    buffered += d.toString('utf8');
    const lines = buffered.split('\n');
    buffered = lines.pop() ?? '';
    for (const line of lines) {
      try {
        const o = JSON.parse(line) as {
          time: string;
          level: number;
          msg: string;
          partition?: number;
          offset?: string;
          last?: string;
        };
        entries.push({ ...o, time: Date.parse(o.time) });
      } catch {
        // not a JSON line (the banner)
      }
    }
  });
  return { child, entries };
}

/** When the monitor first checkpointed `partition` past `offset` after `after` (polling its log). */
async function checkpointedPast(mon: MonitorChild, partition: number, offset: number, after: number) {
  const deadline = Date.now() + 120_000;
  for (;;) {
    const hit = mon.entries.find(
      (e) =>
        e.msg === 'checkpoint' && e.partition === partition && e.time > after && Number(e.offset) > offset,
    );
    if (hit) return hit.time;
    if (Date.now() > deadline)
      throw new Error(`partition ${partition} not checkpointed past ${offset} in 120 s`);
    await sleep(100);
  }
}

/**
 * A topic's offsets, asked again (every 500 ms, 20 times at most) while leaders move: a broker
 * restarted by the previous run takes its preferred leaderships back, and a request that lands
 * meanwhile fails with "not the leader" (it ended a run once).
 */
async function offsetsOf(admin: Admin, topic: string) {
  for (let attempt = 1; ; attempt++) {
    try {
      return await admin.fetchTopicOffsets(topic);
    } catch (err) {
      if (attempt >= 20) throw err;
      await sleep(500);
    }
  }
}

/** When the monitor first fetched a batch of `partition` reaching `offset` after `after` (its debug 'batch' line), or null. */
function fetchedPast(mon: MonitorChild, partition: number, offset: number, after: number): number | null {
  const hit = mon.entries.find(
    (e) => e.msg === 'batch' && e.partition === partition && e.time > after && Number(e.last) >= offset,
  );
  return hit?.time ?? null;
}

/** Java's String.hashCode, as Kafka's group coordinator places a group (Utils.abs(hash) % partitions). */
function javaStringHash(text: string): number {
  let hash = 0;
  for (let i = 0; i < text.length; i++) hash = (Math.imul(31, hash) + text.charCodeAt(i)) | 0;
  return hash;
}

/** The broker that coordinates `group`: the leader of its __consumer_offsets partition. */
async function coordinatorOf(admin: Admin, group: string): Promise<number> {
  const meta = await admin.fetchTopicMetadata({ topics: ['__consumer_offsets'] });
  const partitions = meta.topics[0].partitions;
  const hash = javaStringHash(group);
  const index = (hash === -2147483648 ? 0 : Math.abs(hash)) % partitions.length;
  return partitions.find((p) => p.partitionId === index)!.leader;
}

/**
 * Polls the brokers' metadata (every 200 ms, each request a fresh Metadata call) until the given
 * partitions have a leader other than `dead`; resolves with when each was first seen moved.
 */
async function leadersMoved(
  admin: Admin,
  watched: { topic: string; partition: number }[],
  dead: number,
  stop: { done: boolean },
): Promise<(number | null)[]> {
  const seen: (number | null)[] = watched.map(() => null);
  const topics = [...new Set(watched.map((w) => w.topic))];
  while (!stop.done && seen.some((t) => t === null)) {
    const meta = await admin.fetchTopicMetadata({ topics }).catch(() => null);
    const at = Date.now();
    watched.forEach((w, i) => {
      const leader = meta?.topics
        .find((t) => t.name === w.topic)
        ?.partitions.find((p) => p.partitionId === w.partition)?.leader;
      if (seen[i] === null && leader !== undefined && leader >= 0 && leader !== dead) seen[i] = at;
    });
    await sleep(200);
  }
  return seen;
}

interface Names {
  input: string;
  alerts: string;
  rejected: string;
  group: string;
  prefix: string;
}

/** Step `step` of `sensors` invented sensors (a reading a second each in event time), with spikes that raise and clear alerts. */
function readingsAt(step: number, sensors: number, rnd: () => number): Reading[] {
  const t0 = Date.UTC(2026, 4, 2, 6, 0, 0);
  return Array.from({ length: sensors }, (_, i) => {
    const noise = (rnd() + rnd() + rnd() - 1.5) * 2;
    // Four readings out of every 60 spike, at a sensor-specific phase: alerts every few seconds.
    const spike = step > 40 && (step + i * 13) % 60 < 4 ? 40 + rnd() * 10 : 0;
    return {
      sensor: `still-${i % 5}.temp-${String(i).padStart(2, '0')}`,
      ts: t0 + step * 1000 + i,
      value: 100 + i * 7 + noise + spike,
    };
  });
}

/**
 * Streams readings per partition, each partition on its own (its sensors' readings in step order,
 * CHUNK per send, GAP_MS apart), until `stop` is set.
 */
function streamUntil(gateway: KafkaGateway, stop: { done: boolean }): Promise<void> {
  const partitions = new Set(readingsAt(0, SENSORS, mulberry32(1)).map((r) => gateway.partitionOf(r.sensor)));
  return Promise.all(
    [...partitions].map(async (partition) => {
      const rnd = mulberry32(17 + partition);
      const queue: Reading[] = [];
      for (let step = 0; !stop.done;) {
        while (queue.length < CHUNK)
          queue.push(
            ...readingsAt(step++, SENSORS, rnd).filter((r) => gateway.partitionOf(r.sensor) === partition),
          );
        await gateway.sendUntilAcknowledged(partition, queue.splice(0, CHUNK));
        await sleep(GAP_MS);
      }
    }),
  ).then(() => undefined);
}

/** Every partition of the topics has three replicas in sync and a leader. */
async function waitFullySynced(admin: Admin, topics: string[]): Promise<void> {
  const deadline = Date.now() + 120_000;
  for (;;) {
    const meta = await admin.fetchTopicMetadata({ topics }).catch(() => null);
    const partitions = meta?.topics.flatMap((t) => t.partitions) ?? [];
    if (partitions.length > 0 && partitions.every((p) => p.isr.length === 3 && p.leader >= 0)) return;
    if (Date.now() > deadline) throw new Error(`topics not fully in sync in 120 s`);
    await sleep(250);
  }
}

/** Append times of the alert events on one partition (the topic stamps LogAppendTime). */
async function appendTimes(kafka: Kafka, topic: string, partition: number, until: number): Promise<number[]> {
  const admin = kafka.admin();
  await admin.connect();
  const end = Number((await offsetsOf(admin, topic)).find((o) => o.partition === partition)!.high);
  await admin.disconnect();
  const times: number[] = [];
  if (end === 0) return times;
  const consumer = kafka.consumer({ groupId: `bench-failover-read-${Date.now()}-${partition}` });
  await consumer.connect();
  await consumer.subscribe({ topic, fromBeginning: true });
  await new Promise<void>((resolve, reject) => {
    const timer = setTimeout(
      () => reject(new Error(`alert topic partition ${partition} not read in 60 s`)),
      60_000,
    );
    void consumer.run({
      eachMessage: async ({ partition: p, message }) => {
        if (p !== partition) return;
        times.push(Number(message.timestamp));
        if (Number(message.offset) + 1 >= end) {
          clearTimeout(timer);
          resolve();
        }
      },
    });
  });
  await consumer.disconnect();
  return times.filter((t) => t <= until);
}

/** One run's figures (times in ms). */
interface RunResult {
  /** Which broker was killed: an input partition's leader that is not the group's coordinator, or the coordinator. */
  victim: Victim;
  inputPartition: number;
  killedNode: number;
  /** The group's coordinator before the kill, and whether it was the broker killed. */
  coordinatorNode: number;
  coordinatorKilled: boolean;
  inputPauseMs: number;
  /**
   * The input pause in phases, ms after the SIGKILL: a new leader of the input partition in the
   * brokers' metadata; the gateway's first send to it acknowledged; the monitor's first fetch of a
   * reading sent after the kill; its first checkpoint past it (= inputPauseMs). And for the alert
   * partition: its new leader, then the first alert event appended (= alertPauseMs).
   */
  phases: {
    inputLeaderMovedMs: number | null;
    inputWrittenMs: number | null;
    firstFetchMs: number | null;
    checkpointedMs: number;
    alertLeaderMovedMs: number | null;
    alertAppendedMs: number | null;
    /**
     * The longest time without a fetched batch of any input partition the dead broker did not
     * lead, from the kill to the resume: whether the partitions on live brokers stood still too.
     */
    othersLongestGapMs: number | null;
    /**
     * The first time the Kafka client's consumer gave up and restarted after the kill (its
     * 'Crash:' line), or null: after a coordinator's death it does so once its heartbeats to the
     * dead broker have failed, and joins again as a new member, which the new coordinator holds
     * until the old member's session expires (firstRejoinMs): a second stop after the resume.
     */
    firstConsumerCrashMs: number | null;
    /** 'partitions assigned' lines after the kill (each a rejoin of the group). */
    rejoins: number;
    firstRejoinMs: number | null;
  };
  alertPartition: number | null;
  alertPauseMs: number | null;
  alertGapBeforeKillMs: number | null;
  longestProducerSendMs: number;
  failedProducerSends: number;
  loadAverage1m: number;
  /** The monitor's log lines from the kill to the resume, by message: count and first time after the kill (ms). */
  monitorAfterKill: Record<string, { count: number; firstMs: number }>;
}

/**
 * The monitor's log lines between two times, by message (cut to 90 characters): how many and the
 * first one's time after `from`; debug lines too (the Kafka client's own retries are logged
 * there), checkpoints and batches left out.
 */
function linesBetween(
  mon: MonitorChild,
  from: number,
  to: number,
): Record<string, { count: number; firstMs: number }> {
  const lines: Record<string, { count: number; firstMs: number }> = {};
  for (const e of mon.entries)
    if (e.msg !== 'checkpoint' && e.msg !== 'batch' && e.time >= from && e.time <= to) {
      const msg = String(e.msg).slice(0, 90);
      const line = (lines[msg] ??= { count: 0, firstMs: e.time - from });
      line.count++;
    }
  return lines;
}

/** Waits until each alert partition holds at least `count` events (judging is live). */
async function waitAlerts(admin: Admin, topic: string, count: number): Promise<void> {
  const deadline = Date.now() + 180_000;
  for (;;) {
    const ends = await offsetsOf(admin, topic);
    if (ends.every((o) => Number(o.high) >= count)) return;
    if (Date.now() > deadline)
      throw new Error(`alert topic ${topic}: fewer than ${count} events per partition in 180 s`);
    await sleep(250);
  }
}

/** Waits until the partition's end offset passes `offset` (an event appended on its new leader). */
async function waitEndPast(admin: Admin, topic: string, partition: number, offset: number): Promise<void> {
  const deadline = Date.now() + 120_000;
  for (;;) {
    const ends = await admin.fetchTopicOffsets(topic).catch(() => []);
    const high = Number(ends.find((o) => o.partition === partition)?.high ?? -1);
    if (high > offset) return;
    if (Date.now() > deadline)
      throw new Error(`${topic} partition ${partition} did not grow past ${offset} in 120 s`);
    await sleep(100);
  }
}

function namesFor(run: number): Names {
  const id = `${process.pid}-${Date.now().toString(36)}-${run}`;
  return {
    input: `bench-failover-in-${id}`,
    alerts: `bench-failover-alerts-${id}`,
    rejected: `bench-failover-rejected-${id}`,
    group: `bench-failover-${id}`,
    prefix: `bench-failover-${id}`,
  };
}

async function createTopics(admin: Admin, names: Names): Promise<void> {
  const minInSync = { name: 'min.insync.replicas', value: '2' };
  await createTopicsWithLeaders(admin, [
    { topic: names.input, numPartitions: INPUT_PARTITIONS, replicationFactor: 3, configEntries: [minInSync] },
    {
      topic: names.alerts,
      numPartitions: ALERT_PARTITIONS,
      replicationFactor: 3,
      configEntries: [minInSync, { name: 'message.timestamp.type', value: 'LogAppendTime' }],
    },
    { topic: names.rejected, numPartitions: 1, replicationFactor: 3, configEntries: [minInSync] },
  ]);
}

interface Stack {
  dir: string;
  env: NodeJS.ProcessEnv;
  kafka: Kafka;
  admin: Admin;
  pid(node: number): number;
}

/**
 * One run: fresh topics and monitor, stream, SIGKILL a broker (the leader of the busiest input
 * partition that the group's coordinator does not lead, or the coordinator and the busiest input
 * partition it leads), measure, restart it.
 */
async function oneRun(stack: Stack, run: number, victim: Victim): Promise<RunResult> {
  const { kafka, admin } = stack;
  const names = namesFor(run);
  await createTopics(admin, names);
  const configFile = join(stack.dir, `engine-${run}.yaml`);
  writeFileSync(configFile, CONFIG);
  const mon = spawnMonitor(names, configFile, run);
  const producer = kafka.producer({ idempotent: true, maxInFlightRequests: 1 });
  await producer.connect();
  const gateway = new KafkaGateway(producer, names.input, INPUT_PARTITIONS);
  const stop = { done: false };
  const streaming = streamUntil(gateway, stop);
  try {
    await waitAlerts(admin, names.alerts, 20);
    const ends = await offsetsOf(admin, names.input);
    const meta = await admin.fetchTopicMetadata({ topics: [names.input, names.alerts] });
    const partitionsOf = (topic: string) => meta.topics.find((t) => t.name === topic)!.partitions;
    const coordinatorNode = await coordinatorOf(admin, names.group);
    const leaderOf = (partition: number) =>
      partitionsOf(names.input).find((p) => p.partitionId === partition)!.leader;
    // The busiest input partition among those the chosen kind of broker leads (any, if none).
    const candidates = ends.filter((o) =>
      victim === 'coordinator'
        ? leaderOf(o.partition) === coordinatorNode
        : leaderOf(o.partition) !== coordinatorNode,
    );
    const busiest = (candidates.length > 0 ? candidates : ends).reduce((a, b) =>
      Number(b.high) > Number(a.high) ? b : a,
    ).partition;
    const node = victim === 'coordinator' ? coordinatorNode : leaderOf(busiest);
    const alertPartition = partitionsOf(names.alerts).find((p) => p.leader === node)?.partitionId ?? null;
    const alertEnd =
      alertPartition === null
        ? 0
        : Number((await offsetsOf(admin, names.alerts)).find((o) => o.partition === alertPartition)!.high);
    // Offsets from here on were sent after the kill (one send of CHUNK may be in flight).
    const sentAfterKill = gateway.acknowledgedCount(busiest) + CHUNK;
    const loadAverage1m = loadavg()[0];
    // Metadata from the two survivors only: a client that also knows the dead broker retries on it
    // with growing waits, which blurred this phase by seconds.
    const survivors = new Kafka({
      clientId: 'bench-failover-watch',
      brokers: BROKERS.filter((_, i) => i + 1 !== node),
      logLevel: logLevel.NOTHING,
      retry: { initialRetryTime: 100, maxRetryTime: 200, retries: 2 },
    }).admin();
    await survivors.connect();
    const killedAt = Date.now();
    process.kill(stack.pid(node), 'SIGKILL');
    const watching = { done: false };
    const moved = leadersMoved(
      survivors,
      [
        { topic: names.input, partition: busiest },
        ...(alertPartition === null ? [] : [{ topic: names.alerts, partition: alertPartition }]),
      ],
      node,
      watching,
    );
    const resumedAt = await checkpointedPast(mon, busiest, sentAfterKill, killedAt);
    if (alertPartition !== null) await waitEndPast(admin, names.alerts, alertPartition, alertEnd);
    watching.done = true;
    const [inputMovedAt, alertMovedAt] = await moved;
    await survivors.disconnect();
    // A few more seconds of alerts, so the partition holds some appended after the kill for sure.
    await sleep(3_000);
    stop.done = true;
    await streaming;
    let alertPauseMs: number | null = null;
    let alertGapBeforeKillMs: number | null = null;
    if (alertPartition !== null) {
      const times = await appendTimes(kafka, names.alerts, alertPartition, Date.now());
      const after = times.filter((t) => t > killedAt);
      alertPauseMs = after.length > 0 ? Math.min(...after) - killedAt : null;
      const before = [
        killedAt - 5_000,
        ...times.filter((t) => t > killedAt - 5_000 && t <= killedAt),
        killedAt,
      ];
      alertGapBeforeKillMs = Math.max(...before.slice(1).map((t, i) => t - before[i]));
    }
    await stackScript('stack-up.sh', stack.env, ['--brokers', '3']);
    await waitFullySynced(admin, [names.input, names.alerts, names.rejected]);
    const since = (t: number | null | undefined) => (t === null || t === undefined ? null : t - killedAt);
    const others = new Set(
      partitionsOf(names.input)
        .filter((p) => p.leader !== node)
        .map((p) => p.partitionId),
    );
    const otherBatches = [
      killedAt,
      ...mon.entries
        .filter(
          (e) => e.msg === 'batch' && others.has(e.partition!) && e.time > killedAt && e.time < resumedAt,
        )
        .map((e) => e.time),
      resumedAt,
    ];
    const crash = mon.entries.find((e) => e.time > killedAt && String(e.msg).startsWith('Crash:'));
    const rejoins = mon.entries.filter((e) => e.msg === 'partitions assigned' && e.time > killedAt);
    return {
      victim,
      inputPartition: busiest,
      killedNode: node,
      coordinatorNode,
      coordinatorKilled: coordinatorNode === node,
      inputPauseMs: resumedAt - killedAt,
      phases: {
        inputLeaderMovedMs: since(inputMovedAt),
        inputWrittenMs: since((gateway.acknowledgedAt.get(busiest) ?? []).find((t) => t > killedAt)),
        firstFetchMs: since(fetchedPast(mon, busiest, sentAfterKill, killedAt)),
        checkpointedMs: resumedAt - killedAt,
        alertLeaderMovedMs: since(alertMovedAt),
        alertAppendedMs: alertPauseMs,
        othersLongestGapMs:
          others.size === 0 ? null : Math.max(...otherBatches.slice(1).map((t, i) => t - otherBatches[i])),
        firstConsumerCrashMs: since(crash?.time),
        rejoins: rejoins.filter((e) => e.time <= resumedAt).length,
        firstRejoinMs: since(rejoins[0]?.time),
      },
      alertPartition,
      alertPauseMs,
      alertGapBeforeKillMs,
      longestProducerSendMs: gateway.longestSendMs,
      failedProducerSends: gateway.failures.length,
      loadAverage1m: Math.round(loadAverage1m * 10) / 10,
      monitorAfterKill: linesBetween(mon, killedAt, resumedAt),
    };
  } finally {
    stop.done = true;
    await streaming.catch(() => undefined);
    await producer.disconnect().catch(() => undefined);
    mon.child.kill('SIGTERM');
    await new Promise((resolve) =>
      mon.child.exitCode !== null ? resolve(null) : mon.child.once('exit', resolve),
    );
    await admin.deleteTopics({ topics: [names.input, names.alerts, names.rejected] }).catch(() => undefined);
  }
}

const spread = (values: number[]) => {
  const sorted = [...values].sort((a, b) => a - b);
  return sorted.length === 0
    ? null
    : { min: sorted[0], median: sorted[Math.floor(sorted.length / 2)], max: sorted[sorted.length - 1] };
};

async function startStack(): Promise<Stack> {
  const dir = mkdtempSync(join(tmpdir(), 'sf-bench-failover-'));
  const env = {
    STREAMFENCE_STACK_DIR: dir,
    STREAMFENCE_KAFKA_PORT: String(BASE_PORT),
    STREAMFENCE_KAFKA_CONTROLLER_PORT: String(BASE_PORT + 100),
    STREAMFENCE_REDIS_URL: REDIS_URL,
    STREAMFENCE_STACK_REDIS_PORT: String(REDIS_PORT),
  };
  process.stderr.write(
    `failover: starting three brokers on ${BROKERS.join(',')} and Redis on ${REDIS_PORT}\n`,
  );
  await stackScript('stack-up.sh', env, ['--brokers', '3']);
  const kafka = new Kafka({ clientId: 'bench-failover', brokers: BROKERS, logLevel: logLevel.NOTHING });
  const admin = kafka.admin();
  await admin.connect();
  return {
    dir,
    env,
    kafka,
    admin,
    pid: (node) => Number(readFileSync(join(dir, `kafka-${node}.pid`), 'utf8').trim()),
  };
}

async function stopStack(stack: Stack): Promise<void> {
  await stack.admin.disconnect().catch(() => undefined);
  for (const node of [1, 2, 3]) {
    try {
      process.kill(stack.pid(node), 'SIGKILL');
    } catch {
      // not running
    }
  }
  await stackScript('stack-down.sh', stack.env, ['--brokers', '3', '--wipe']).catch(() => undefined);
  rmSync(stack.dir, { recursive: true, force: true });
}

export async function run(): Promise<Record<string, unknown>> {
  const stack = await startStack();
  const runs: RunResult[] = [];
  try {
    for (let i = 0; i < RUNS; i++) {
      const result = await oneRun(stack, i, victimOf(i));
      process.stderr.write(`failover run ${i + 1}/${RUNS}: ${JSON.stringify(result)}\n`);
      runs.push(result);
    }
  } finally {
    await stopStack(stack);
  }
  const summary = (kind: Victim) => {
    const of = runs.filter((r) => r.victim === kind);
    return {
      runs: of.length,
      inputPauseMs: spread(of.map((r) => r.inputPauseMs)),
      alertPauseMs: spread(of.flatMap((r) => (r.alertPauseMs === null ? [] : [r.alertPauseMs]))),
      leaderMovedMs: spread(
        of.flatMap((r) => (r.phases.inputLeaderMovedMs === null ? [] : [r.phases.inputLeaderMovedMs])),
      ),
    };
  };
  return {
    setup: `3 brokers (replication 3, min.insync.replicas 2, broker defaults), ${INPUT_PARTITIONS} input / ${ALERT_PARTITIONS} alert partitions, ${SENSORS} sensors, about ${Math.round((INPUT_PARTITIONS * CHUNK * 1000) / GAP_MS)} readings/s offered, monitor checkpoints every 200 ms, --session-timeout-ms ${SESSION_TIMEOUT_MS ?? 'default (30000)'}`,
    leaderKilled: summary('leader'),
    coordinatorKilled: summary('coordinator'),
    runs,
  };
}
