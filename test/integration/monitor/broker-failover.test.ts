/**
 * A broker leader dies under a running monitor, on a real three-broker KRaft cluster that this file
 * starts for itself (deploy/local/stack-up.sh --brokers 3 in a stack folder of its own, on ports
 * 24092-24094 with controllers on 24192-24194, below Linux's ephemeral port range (32768-60999), so
 * no client socket can hold one; the shared broker is untouched). Topics: replication factor 3,
 * min.insync.replicas 2.
 *  1. The leader of the busiest input partition is SIGKILLed mid-stream and restarted later.
 *  2. The leader of the alert partition with the most events is SIGKILLed mid-stream and restarted
 *     later.
 * Each time the monitor keeps going in the same process, every sensor's `seen` is exact, no alert
 * event is lost or invented against the in-process reference (replay's engine), each sensor's
 * events come in the reference's order, the Kafka backoff is counted, and the pause (SIGKILL to the
 * monitor's next progress) is printed. `npm run bench -- failover` measures that pause over several
 * runs (test/bench/failover.bench.ts).
 *
 * The readings are produced as a plant gateway should (test/support/kafka-gateway.ts): acks from
 * all in-sync replicas, the idempotent producer, each send to one partition, retried until
 * acknowledged. What the topic holds is then compared with what the producer had acknowledged,
 * message by message, so a reading lost by the producer is never blamed on the monitor (or hidden
 * by it).
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { Kafka, logLevel, type Admin } from 'kafkajs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createTopicsWithLeaders } from '../../../services/connect/topics.js';
import { KafkaGateway } from '../../support/kafka-gateway.js';
import { redisUrl } from '../../harness/services.js';
import {
  expectExactState,
  expectNoLostAlerts,
  generateReadings,
  readTopic,
  runStackScript,
  sleep,
  testConfig,
  useMonitorBed,
  waitCheckpointedToEnd,
  writeTestConfig,
  type MonitorProc,
} from './helpers.js';

const KAFKA_PORT = Number(process.env.STREAMFENCE_TEST_FAILOVER_KAFKA_PORT ?? 24092);
const CONTROLLER_PORT = Number(process.env.STREAMFENCE_TEST_FAILOVER_CONTROLLER_PORT ?? 24192);
const BROKERS = [0, 1, 2].map((i) => `127.0.0.1:${KAFKA_PORT + i}`);
const INPUT_PARTITIONS = 6;
/**
 * Several alert partitions on different leaders: the monitor publishes to several brokers at once
 * (one request per partition, see services/monitor/partition-sends.ts).
 */
const ALERT_PARTITIONS = 3;
const SENSORS = 20;
const PER_SENSOR = 900;
/** Readings per producer send. */
const CHUNK = 30;

/** The three-broker cluster of this file: its stack folder, the env for the stack scripts, a client. */
interface Cluster {
  dir: string;
  env: NodeJS.ProcessEnv;
  kafka: Kafka;
  /** The pid of broker node n (node.id n, 1..3). */
  pid(node: number): number;
}

/** Every partition of the topics has all three replicas in sync again (after a restart). */
async function waitFullySynced(admin: Admin, topics: string[], timeoutMs = 60_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const meta = await admin.fetchTopicMetadata({ topics }).catch(() => null);
    const partitions = meta?.topics.flatMap((t) => t.partitions) ?? [];
    if (partitions.length > 0 && partitions.every((p) => p.isr.length === 3 && p.leader >= 0)) return;
    if (Date.now() > deadline)
      throw new Error(`topics ${topics.join(', ')} not fully in sync in ${timeoutMs} ms`);
    await sleep(250);
  }
}

async function leaderOf(admin: Admin, topic: string, partition: number): Promise<number> {
  const meta = await admin.fetchTopicMetadata({ topics: [topic] });
  return meta.topics[0].partitions.find((p) => p.partitionId === partition)!.leader;
}

/** One parsed monitor log line with its time. */
function logEntries(mon: MonitorProc): { time: number; msg: string; partition?: number; offset?: string }[] {
  return mon.logs.flatMap((l) => {
    try {
      const o = JSON.parse(l) as { time: string; msg: string; partition?: number; offset?: string };
      return [{ ...o, time: Date.parse(o.time) }];
    } catch {
      return [];
    }
  });
}

/**
 * When the monitor first checkpointed the partition past `offset` (so had judged the reading there),
 * polling its log; after `after`.
 */
async function checkpointedPast(
  mon: MonitorProc,
  partition: number,
  offset: number,
  after: number,
): Promise<number> {
  const deadline = Date.now() + 60_000;
  for (;;) {
    const hit = logEntries(mon).find(
      (e) =>
        e.msg === 'checkpoint' && e.partition === partition && e.time > after && Number(e.offset) > offset,
    );
    if (hit) return hit.time;
    if (Date.now() > deadline)
      throw new Error(`partition ${partition} not checkpointed past offset ${offset} within 60 s`);
    await sleep(100);
  }
}

/** The longest time without an appended message, between `from` and `to` (times sorted or not). */
function longestGap(times: number[], from: number, to: number): number {
  const inside = [from, ...times.filter((t) => t > from && t < to), to].sort((x, y) => x - y);
  let gap = 0;
  for (let i = 1; i < inside.length; i++) gap = Math.max(gap, inside[i] - inside[i - 1]);
  return gap;
}

/** The topic holds exactly the readings the gateway had acknowledged, per partition, in order. */
async function expectTopicHoldsAcknowledged(
  kafka: Kafka,
  topic: string,
  gateway: KafkaGateway,
  produced: number,
) {
  const admin = kafka.admin();
  await admin.connect();
  const ends = await admin.fetchTopicOffsets(topic);
  await admin.disconnect();
  const held = new Map<number, string[]>();
  for (const m of await readTopic(topic, kafka))
    held.set(m.partition, [...(held.get(m.partition) ?? []), m.value!.toString('utf8')]);
  let total = 0;
  for (const e of ends) {
    const acked = (gateway.acknowledged.get(e.partition) ?? []).map((r) => JSON.stringify(r));
    total += acked.length;
    expect(Number(e.high), `end offset of partition ${e.partition}`).toBe(acked.length);
    expect(held.get(e.partition) ?? [], `messages of partition ${e.partition}`).toEqual(acked);
  }
  expect(total).toBe(produced);
}

async function kafkaBackoffs(mon: MonitorProc): Promise<number> {
  const text = await (await fetch(`http://127.0.0.1:${await mon.metricsPort()}/metrics`)).text();
  let sum = 0;
  for (const m of text.matchAll(/^streamfence_backoff_total\{dependency="kafka",cause="\w+"\} (\S+)$/gm))
    sum += Number(m[1]);
  return sum;
}

describe('streamfence run: a broker leader dies (three brokers, replication 3, min.insync.replicas 2)', () => {
  let cluster: Cluster | undefined;
  let admin: Admin;
  const bed = useMonitorBed();

  beforeAll(async () => {
    const dir = mkdtempSync(path.join(tmpdir(), 'sf-broker-failover-'));
    const env = {
      STREAMFENCE_STACK_DIR: dir,
      STREAMFENCE_KAFKA_PORT: String(KAFKA_PORT),
      STREAMFENCE_KAFKA_CONTROLLER_PORT: String(CONTROLLER_PORT),
      STREAMFENCE_REDIS_URL: redisUrl(),
    };
    cluster = {
      dir,
      env,
      kafka: new Kafka({ clientId: 'broker-failover-test', brokers: BROKERS, logLevel: logLevel.NOTHING }),
      pid: (node) => Number(readFileSync(path.join(dir, `kafka-${node}.pid`), 'utf8').trim()),
    };
    // Never skipped: a cluster that cannot start fails the file (under CI=true or not).
    await runStackScript('stack-up.sh', env, ['--brokers', '3']);
    admin = cluster.kafka.admin();
    await admin.connect();
  }, 180_000);

  afterAll(async () => {
    await admin?.disconnect().catch(() => undefined);
    if (!cluster) return;
    // Its data is wiped anyway: no controlled shutdown to wait for.
    for (const node of [1, 2, 3]) {
      try {
        process.kill(cluster.pid(node), 'SIGKILL');
      } catch {
        // not running (or never started)
      }
    }
    await runStackScript('stack-down.sh', cluster.env, ['--brokers', '3', '--wipe']).catch(() => undefined);
    rmSync(cluster.dir, { recursive: true, force: true });
  }, 60_000);

  /** Input (6 partitions), alert (3) and rejected (1) topics, each replicated 3 times, 2 in sync. */
  async function createTopics(): Promise<void> {
    const minInSync = { name: 'min.insync.replicas', value: '2' };
    await createTopicsWithLeaders(admin, [
      { topic: bed.topic, numPartitions: INPUT_PARTITIONS, replicationFactor: 3, configEntries: [minInSync] },
      // The broker stamps alert events with their append time: the alert pause is read from it.
      {
        topic: bed.alertTopic,
        numPartitions: ALERT_PARTITIONS,
        replicationFactor: 3,
        configEntries: [minInSync, { name: 'message.timestamp.type', value: 'LogAppendTime' }],
      },
      { topic: bed.rejectedTopic, numPartitions: 1, replicationFactor: 3, configEntries: [minInSync] },
    ]);
  }

  /** SIGKILLs broker node n and returns the time. */
  function killBroker(node: number): number {
    const at = Date.now();
    process.kill(cluster!.pid(node), 'SIGKILL');
    return at;
  }

  it('keeps going, exact, when the leader of the busiest input partition and then of the busiest alert partition is SIGKILLed mid-stream', async () => {
    const { kafka, env } = cluster!;
    await createTopics();
    const readings = generateReadings(SENSORS, PER_SENSOR, 41);
    const config = testConfig();
    const cut = (share: number) => Math.floor(readings.length * share);
    const producer = kafka.producer({ idempotent: true, maxInFlightRequests: 1 });
    await producer.connect();
    const gateway = new KafkaGateway(producer, bed.topic, INPUT_PARTITIONS);
    await gateway.stream(readings.slice(0, cut(0.25)), 500, 0);
    const mon = bed.spawn(writeTestConfig(), { extra: ['--brokers', BROKERS.join(',')] });
    await waitCheckpointedToEnd(bed.redis, bed.prefix, bed.group, bed.topic, 60_000, kafka);

    // 1. The leader of the partition holding the most readings dies two seconds into a stream;
    //    it is restarted once the monitor reads that partition again, while the stream goes on.
    let streaming = gateway.stream(readings.slice(cut(0.25), cut(0.55)), CHUNK, 150);
    await sleep(2_000);
    const ends = await admin.fetchTopicOffsets(bed.topic);
    const busiest = ends.reduce((a, b) => (Number(b.high) > Number(a.high) ? b : a)).partition;
    const inputLeader = await leaderOf(admin, bed.topic, busiest);
    // Offsets from here on were sent after the kill (one send of CHUNK may be in flight), so only
    // the new leader can have taken them: judging one is the monitor reading that partition again.
    const sentAfterKill = gateway.acknowledgedCount(busiest) + CHUNK;
    const inputKilledAt = killBroker(inputLeader);
    const inputResumedAt = await checkpointedPast(mon, busiest, sentAfterKill, inputKilledAt);
    await Promise.all([streaming, runStackScript('stack-up.sh', env, ['--brokers', '3'])]);
    const backoffsAfterFirst = await kafkaBackoffs(mon);
    expect(backoffsAfterFirst).toBeGreaterThan(0);
    // A second kill before the restarted broker caught up would leave one replica in sync.
    await waitFullySynced(admin, [bed.topic, bed.alertTopic, bed.rejectedTopic]);

    // 2. The leader of the alert partition dies two seconds into the next stream; restarted after it.
    streaming = gateway.stream(readings.slice(cut(0.55), cut(0.9)), CHUNK, 150);
    await sleep(2_000);
    const alertEnds = await admin.fetchTopicOffsets(bed.alertTopic);
    const alertBusiest = alertEnds.reduce((a, b) => (Number(b.high) > Number(a.high) ? b : a)).partition;
    const alertLeader = await leaderOf(admin, bed.alertTopic, alertBusiest);
    const alertKilledAt = killBroker(alertLeader);
    await streaming;
    const alertStreamEnd = Date.now();
    // Restarted while the last readings stream in.
    await Promise.all([
      runStackScript('stack-up.sh', env, ['--brokers', '3']),
      gateway.stream(readings.slice(cut(0.9)), CHUNK, 100),
    ]);
    await producer.disconnect();

    await waitCheckpointedToEnd(bed.redis, bed.prefix, bed.group, bed.topic, 90_000, kafka);
    await expectTopicHoldsAcknowledged(kafka, bed.topic, gateway, readings.length);
    await expectExactState(bed, readings, config);
    const checked = await expectNoLostAlerts(bed.alertTopic, readings, config, {
      onlyReferenceEvents: true,
      inOrder: true,
      kafka,
    });
    expect(checked).toBeGreaterThan(0);
    expect(await kafkaBackoffs(mon)).toBeGreaterThan(backoffsAfterFirst);
    // The same process all along: it stops cleanly with everything checkpointed.
    expect(mon.child.exitCode).toBeNull();
    mon.child.kill('SIGTERM');
    expect(await mon.exited).toBe(0);

    // The broker stamps each alert event with its append time: the alert pause is the longest
    // stretch without one from two seconds before the kill to the end of that stream (alert events
    // are raised every few tens of milliseconds while the readings stream in).
    const appended = (await readTopic(bed.alertTopic, kafka))
      .filter((m) => m.partition === alertBusiest)
      .map((m) => m.timestamp);
    const alertPause = longestGap(appended, alertKilledAt - 2_000, alertStreamEnd);
    expect(alertPause).toBeLessThan(60_000);
    process.stderr.write(
      `broker-failover: leader of input partition ${busiest} (node ${inputLeader}) SIGKILLed: a reading sent after it judged ${inputResumedAt - inputKilledAt} ms later; ` +
        `leader of alert partition ${alertBusiest} (node ${alertLeader}) SIGKILLed: no alert event appended for ${alertPause} ms; ` +
        `longest producer send ${gateway.longestSendMs} ms, ${gateway.failures.length} sends failed and were sent again\n`,
    );
  }, 240_000);
});
