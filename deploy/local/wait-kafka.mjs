// Readiness check for the local broker: succeeds only once a client can create (or find) a topic
// and see its partition leader, which is what tests need; an open port alone is not enough.
//
//   node wait-kafka.mjs --brokers 127.0.0.1:9092 [--timeout 120] [--pid 1234[,1235]] [--probe]
//                       [--expect-brokers 3]
//
// --probe: one quick metadata request, no topic creation; exit 0 if a Kafka broker answers.
// --pid:   give up early when one of those processes has exited (a broker died during start-up).
// --expect-brokers: wait until that many brokers are registered and every replica of the ready
//          topic (made with the cluster's default replication factor) is in sync.
/* global process, console, setTimeout */
import { Kafka, logLevel } from 'kafkajs';

const READY_TOPIC = 'streamfence.stack.ready';

function parseArgs(argv) {
  const out = { brokers: '127.0.0.1:9092', timeout: 120, pids: [], probe: false, expectBrokers: 1 };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--brokers') out.brokers = argv[++i];
    else if (a === '--timeout') out.timeout = Number(argv[++i]);
    else if (a === '--pid') out.pids = argv[++i].split(',').map(Number);
    else if (a === '--expect-brokers') out.expectBrokers = Number(argv[++i]);
    else if (a === '--probe') out.probe = true;
    else throw new Error(`wait-kafka: unknown argument ${a}`);
  }
  return out;
}

function alive(pid) {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
}

const sleep = (ms) => new Promise((r) => setTimeout(r, ms));

/** Each address answers a metadata request by itself (a node just restarted is still registered). */
async function eachAnswers(brokers, timeoutMs) {
  for (const address of brokers.split(',')) {
    const admin = client(address, timeoutMs).admin();
    try {
      await admin.connect();
      await admin.describeCluster();
    } catch (err) {
      throw new Error(`${address} does not answer yet: ${err instanceof Error ? err.message : String(err)}`);
    } finally {
      await admin.disconnect().catch(() => {});
    }
  }
}

function client(brokers, timeoutMs) {
  return new Kafka({
    clientId: 'streamfence-stack-wait',
    brokers: brokers.split(','),
    logLevel: logLevel.NOTHING,
    connectionTimeout: Math.min(timeoutMs, 2000),
    requestTimeout: Math.max(timeoutMs, 5000),
    retry: { retries: 0 },
  });
}

async function attempt(brokers, probe, timeoutMs, expectBrokers) {
  if (expectBrokers > 1) await eachAnswers(brokers, timeoutMs);
  const admin = client(brokers, timeoutMs).admin();
  try {
    await admin.connect();
    const cluster = await admin.describeCluster();
    if (probe) return `cluster ${cluster.clusterId}, ${cluster.brokers.length} broker(s)`;
    if (cluster.brokers.length < expectBrokers)
      throw new Error(`${cluster.brokers.length} of ${expectBrokers} brokers registered`);
    // Returns false when the topic already exists (an earlier run); both are fine. No replication
    // factor: the broker's default (3 on the three-broker stack) applies.
    await admin.createTopics({ topics: [{ topic: READY_TOPIC, numPartitions: 1 }], waitForLeaders: true });
    const meta = await admin.fetchTopicMetadata({ topics: [READY_TOPIC] });
    const leaderless = meta.topics[0].partitions.filter((p) => p.leader < 0);
    if (leaderless.length > 0) throw new Error('ready topic has no leader yet');
    const behind = meta.topics[0].partitions.filter(
      (p) => p.isr.length < Math.min(expectBrokers, p.replicas.length),
    );
    if (behind.length > 0) throw new Error('ready topic has replicas out of sync');
    if (expectBrokers > 1)
      return `cluster ${cluster.clusterId}, ${cluster.brokers.length} brokers, topic ${READY_TOPIC} in sync`;
    return `cluster ${cluster.clusterId}, topic ${READY_TOPIC} has a leader`;
  } finally {
    await admin.disconnect().catch(() => {});
  }
}

const args = parseArgs(process.argv.slice(2));
const timeoutS = args.probe ? Math.min(args.timeout, 5) : args.timeout;
const deadline = Date.now() + timeoutS * 1000;
let lastError = 'no attempt made';
for (;;) {
  const dead = args.pids.find((pid) => pid > 0 && !alive(pid));
  if (dead !== undefined) {
    console.error(`wait-kafka: broker process ${dead} exited during start-up`);
    process.exit(2);
  }
  try {
    console.log(
      `wait-kafka: ${args.brokers} ready (${await attempt(args.brokers, args.probe, deadline - Date.now(), args.expectBrokers)})`,
    );
    process.exit(0);
  } catch (err) {
    lastError = err instanceof Error ? err.message : String(err);
  }
  if (args.probe || Date.now() > deadline) break;
  await sleep(250);
}
console.error(`wait-kafka: ${args.brokers} not ready after ${timeoutS}s: ${lastError}`);
process.exit(1);
