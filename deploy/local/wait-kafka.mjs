// Readiness check for the local broker: succeeds only once a client can create (or find) a topic
// and see its partition leader, which is what tests need; an open port alone is not enough.
//
//   node wait-kafka.mjs --brokers 127.0.0.1:9092 [--timeout 120] [--pid 1234] [--probe]
//
// --probe: one quick metadata request, no topic creation; exit 0 if a Kafka broker answers.
// --pid:   give up early when that process has exited (the broker died during start-up).
/* global process, console, setTimeout */
import { Kafka, logLevel } from 'kafkajs';

const READY_TOPIC = 'streamfence.stack.ready';

function parseArgs(argv) {
  const out = { brokers: '127.0.0.1:9092', timeout: 120, pid: 0, probe: false };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--brokers') out.brokers = argv[++i];
    else if (a === '--timeout') out.timeout = Number(argv[++i]);
    else if (a === '--pid') out.pid = Number(argv[++i]);
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

async function attempt(brokers, probe, timeoutMs) {
  const kafka = new Kafka({
    clientId: 'streamfence-stack-wait',
    brokers: brokers.split(','),
    logLevel: logLevel.NOTHING,
    connectionTimeout: Math.min(timeoutMs, 2000),
    requestTimeout: Math.max(timeoutMs, 5000),
    retry: { retries: 0 },
  });
  const admin = kafka.admin();
  try {
    await admin.connect();
    const cluster = await admin.describeCluster();
    if (probe) return `cluster ${cluster.clusterId}, ${cluster.brokers.length} broker(s)`;
    // Returns false when the topic already exists (an earlier run); both are fine.
    await admin.createTopics({ topics: [{ topic: READY_TOPIC, numPartitions: 1 }], waitForLeaders: true });
    const meta = await admin.fetchTopicMetadata({ topics: [READY_TOPIC] });
    const leaderless = meta.topics[0].partitions.filter((p) => p.leader < 0);
    if (leaderless.length > 0) throw new Error('ready topic has no leader yet');
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
  if (args.pid && !alive(args.pid)) {
    console.error(`wait-kafka: broker process ${args.pid} exited during start-up`);
    process.exit(2);
  }
  try {
    console.log(
      `wait-kafka: ${args.brokers} ready (${await attempt(args.brokers, args.probe, deadline - Date.now())})`,
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
