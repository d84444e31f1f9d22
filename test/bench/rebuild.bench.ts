/**
 * Warm start cost (`npm run bench -- rebuild`; needs the local stack's Kafka and a redis-server
 * binary for a private Redis): how long the monitor takes to rebuild every sensor's baseline from
 * the input topic, through the real rebuild path (`Monitor` with `warmStart`, the code a state
 * rebuild after a Redis loss runs too), for 10,000 sensors reading once a minute over the span a
 * rebuild re-reads with the default config (window + one bucket = 26 h: 15.6 M readings, ISO-8601
 * `ts` with a zone offset, Kafka message time = reading time). Through Kafka it measures 1,000 such
 * sensors (1.56 M readings) unless STREAMFENCE_BENCH_REBUILD_SENSORS says otherwise, and in the
 * same run:
 *  - a bare kafkajs consumer reading every message of the topic (no parsing): the Kafka read floor;
 *  - the engine alone, parsing and feeding the same readings (no Kafka, no Redis): the CPU part,
 *    at the measured count and at 10,000 sensors, from which the 10,000-sensor rebuild is
 *    estimated (see `target` in the result). STREAMFENCE_BENCH_REBUILD_HOURS shortens the span.
 */
import { createTopicsWithLeaders } from '../../services/connect/topics.js';
import { privateRedis } from './private-redis.js';
import { Kafka, logLevel, type Consumer } from 'kafkajs';
import pino from 'pino';
import { defaultConfig } from '../../libs/config/config.js';
import { historyNeeded } from '../../libs/config/history-span.js';
import { Engine } from '../../libs/engine/engine.js';
import { parseJsonReading } from '../../libs/engine/reading.js';
import { buildKafka, buildRedis } from '../../services/connect/index.js';
import { createLogger } from '../../services/log.js';
import { createMetrics, type Metrics } from '../../services/metrics/metrics.js';
import { Monitor } from '../../services/monitor/monitor.js';
import { mulberry32 } from './prng.js';

const MINUTE = 60_000;
const HOUR = 60 * MINUTE;
/** The sensor count the figure is for: the "10,000 sensors over a day". */
const TARGET_SENSORS = 10_000;
/**
 * Sensors whose history goes through Kafka: a tenth of the target by default (15.6 M messages
 * take the shared development machine's broker many minutes to take in); set it to 10000 to
 * measure the target itself.
 */
const SENSORS = Number(process.env.STREAMFENCE_BENCH_REBUILD_SENSORS ?? 1_000);
/** Hours of history: by default exactly what a rebuild re-reads with the default config. */
const HOURS = Number(process.env.STREAMFENCE_BENCH_REBUILD_HOURS ?? historyNeeded(defaultConfig()) / HOUR);
const PARTITIONS = 6;
/** Messages per produce request, and requests kept in flight. */
const SEND_BATCH = 5_000;
const IN_FLIGHT = 4;

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const brokers = () => (process.env.STREAMFENCE_TEST_BROKERS ?? '127.0.0.1:9092').split(',');
const name = (p: string) => `bench-rebuild-${p}-${process.pid}-${Date.now().toString(36)}`;
const sensorName = (i: number) => `unit-${Math.floor(i / 100)}/tag-${i % 100}`;

/** `epoch` as ISO-8601 local time one hour east of UTC, as plants send it: 2026-05-01T01:00:06.000+01:00. */
function isoPlusOne(epoch: number): string {
  return `${new Date(epoch + HOUR).toISOString().slice(0, -1)}+01:00`;
}

/** One Kafka message of the history. */
interface HistoryMessage {
  key: string;
  value: string;
  timestamp: string;
}

/**
 * The history, minute by minute: every one of `sensors` sensors once a minute (a little jitter in
 * the second), as Kafka messages. Each call of the returned function gives the next minute's
 * slice (15.6 M readings do not fit comfortably in memory at once); the same arguments give the
 * same history.
 */
function historySlices(sensors: number, startMs: number): () => HistoryMessage[] {
  const rnd = mulberry32(11);
  const names = Array.from({ length: sensors }, (_, i) => sensorName(i));
  let minute = 0;
  return () => {
    const slice: HistoryMessage[] = new Array<HistoryMessage>(sensors);
    for (let i = 0; i < sensors; i++) {
      const ts = startMs + minute * MINUTE + (i % 60) * 1000;
      const level = 40 + (i % 23) * 3;
      const value = Math.round((level + (rnd() + rnd() + rnd() - 1.5) * 2) * 1000) / 1000;
      slice[i] = {
        key: names[i],
        value: `{"sensor":"${names[i]}","ts":"${isoPlusOne(ts)}","value":${value}}`,
        timestamp: String(ts),
      };
    }
    minute++;
    return slice;
  };
}

async function produceHistory(
  kafka: Kafka,
  topic: string,
  sensors: number,
  startMs: number,
  minutes: number,
): Promise<number> {
  const producer = kafka.producer({ allowAutoTopicCreation: false });
  await producer.connect();
  const inFlight = new Set<Promise<unknown>>();
  const next = historySlices(sensors, startMs);
  let count = 0;
  for (let k = 0; k < minutes; k++) {
    const slice = next();
    for (let i = 0; i < slice.length; i += SEND_BATCH) {
      const p = producer.send({ topic, acks: -1, messages: slice.slice(i, i + SEND_BATCH) });
      inFlight.add(p);
      void p.finally(() => inFlight.delete(p)).catch(() => undefined);
      if (inFlight.size >= IN_FLIGHT) await Promise.race(inFlight);
    }
    count += slice.length;
  }
  await Promise.all(inFlight);
  await producer.disconnect();
  return count;
}

/**
 * Bare kafkajs consumer of the whole topic, no parsing: how fast Kafka hands the history over.
 * Timed from the end of the first batch to the last, so the group join is not counted.
 */
async function bareRead(
  kafka: Kafka,
  topic: string,
  total: number,
): Promise<{ ms: number; cpuUs: number; messages: number }> {
  const consumer: Consumer = kafka.consumer({ groupId: name('bare'), maxBytesPerPartition: 1_048_576 });
  await consumer.connect();
  await consumer.subscribe({ topic, fromBeginning: true });
  let n = 0;
  let first = 0;
  let firstBatch = 0;
  let cpu0 = process.cpuUsage();
  const timed = await new Promise<{ ms: number; cpuUs: number; messages: number }>((resolve) => {
    void consumer.run({
      eachBatchAutoResolve: true,
      eachBatch: async ({ batch }) => {
        n += batch.messages.length;
        if (first === 0) {
          first = performance.now();
          firstBatch = n;
          cpu0 = process.cpuUsage();
        } else if (n >= total) {
          const cpu = process.cpuUsage(cpu0);
          resolve({ ms: performance.now() - first, cpuUs: cpu.user + cpu.system, messages: n - firstBatch });
        }
      },
    });
  });
  await consumer.disconnect();
  return timed;
}

/**
 * The engine alone on the same kind of history: parse and feed, no Kafka, no Redis, nothing
 * published. Only parsing and feeding are timed (making each minute's messages is not).
 */
function engineOnly(
  sensors: number,
  startMs: number,
  minutes: number,
): { ms: number; cpuUs: number; readings: number; sensors: number } {
  const engine = new Engine(defaultConfig());
  const next = historySlices(sensors, startMs);
  let ms = 0;
  let cpuUs = 0;
  let readings = 0;
  for (let k = 0; k < minutes; k++) {
    const slice = next();
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    for (const m of slice) {
      const r = parseJsonReading(m.value);
      if (r.ok) engine.process(r.reading);
    }
    ms += performance.now() - t0;
    const cpu = process.cpuUsage(cpu0);
    cpuUs += cpu.user + cpu.system;
    readings += slice.length;
  }
  return { ms, cpuUs, readings, sensors: engine.sensorCount };
}

/** The monitor's own log lines, kept (parsed) to read the rebuild's per-partition figures. */
function capturingLogger(lines: Record<string, unknown>[]) {
  return pino(
    { level: 'info', base: null },
    { write: (line: string) => void lines.push(JSON.parse(line) as Record<string, unknown>) },
  );
}

const gaugeValue = async (m: Metrics['rebuildingPartitions']) => (await m.get()).values[0]?.value ?? 0;
const counterTotal = async (m: Metrics['stateRebuilds'] | Metrics['rebuildReadings']) =>
  (await m.get()).values.reduce((n, v) => n + v.value, 0);

interface RebuildTiming {
  msFromStart: number;
  msFromFirstClaim: number;
  cpuUs: number;
  readings: number;
  sensors: number;
  rssMb: number;
}

/** A first deployment with --warm-start on the topic: timed from start() to every partition rebuilt. */
async function warmStart(
  topic: string,
  alertTopic: string,
  redisUrl: string,
  total: number,
): Promise<RebuildTiming> {
  const lines: Record<string, unknown>[] = [];
  const log = capturingLogger(lines);
  const metrics = createMetrics({ defaultMetrics: false });
  const redis = buildRedis({ url: redisUrl });
  const mon = new Monitor({
    kafka: buildKafka({ brokers: brokers() }, { clientId: name('m'), log: createLogger('bench', 'silent') }),
    redis,
    config: defaultConfig(),
    settings: {
      statePrefix: name('sf'),
      inputTopic: topic,
      alertTopic,
      rejectedTopic: alertTopic,
      group: name('g'),
      checkpointMs: 1_000,
      checkpointReadings: 50_000,
      sessionTimeoutMs: 30_000,
      maxSensors: Math.max(SENSORS, 50_000),
      startFrom: 'now',
      warmStart: true,
    },
    log,
    metrics,
  });
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  await mon.start();
  for (;;) {
    const claimed = await counterTotal(metrics.stateRebuilds);
    if (claimed >= PARTITIONS && (await gaugeValue(metrics.rebuildingPartitions)) === 0) break;
    await sleep(50);
  }
  const ms = performance.now() - t0;
  const cpu = process.cpuUsage(cpu0);
  const rssMb = Math.round(process.memoryUsage().rss / 2 ** 20);
  const readings = await counterTotal(metrics.rebuildReadings);
  const done = lines.filter((l) => /^baselines rebuilt/.test(String(l.msg)));
  const claimedAt = lines.filter((l) => l.msg === 'partition state loaded').map((l) => Number(l.time));
  const finishedAt = done.map((l) => Number(l.time));
  await mon.stop();
  redis.disconnect();
  if (readings !== total) throw new Error(`rebuild read ${readings} readings, the topic holds ${total}`);
  return {
    msFromStart: Math.round(ms),
    msFromFirstClaim: Math.max(...finishedAt) - Math.min(...claimedAt),
    cpuUs: cpu.user + cpu.system,
    readings,
    sensors: done.reduce((n, l) => n + Number(l.sensors), 0),
    rssMb,
  };
}

const seconds = (ms: number) => Number((ms / 1000).toFixed(1));
const perReading = (us: number, readings: number) => Number((us / readings).toFixed(2));

export async function run(): Promise<Record<string, unknown>> {
  const kafka = new Kafka({ clientId: name('c'), brokers: brokers(), logLevel: logLevel.NOTHING });
  const admin = kafka.admin();
  await admin.connect();
  const topic = name('in');
  const alertTopic = name('alerts');
  const minutes = Math.round(HOURS * 60);
  // The history ends a minute ago, so all of it lies inside the span a warm start re-reads.
  const startMs = Math.floor(Date.now() / MINUTE) * MINUTE - (minutes + 1) * MINUTE;
  await createTopicsWithLeaders(admin, [
    {
      topic,
      numPartitions: PARTITIONS,
      replicationFactor: 1,
      configEntries: [{ name: 'retention.ms', value: String(3 * 24 * HOUR) }],
    },
    { topic: alertTopic, numPartitions: 1, replicationFactor: 1 },
  ]);
  const { url, proc } = await privateRedis();
  try {
    const p0 = performance.now();
    const total = await produceHistory(kafka, topic, SENSORS, startMs, minutes);
    const produceMs = performance.now() - p0;
    process.stderr.write(`  produced ${total} readings in ${seconds(produceMs)} s; warm start ...\n`);
    const rebuild = await warmStart(topic, alertTopic, url, total);
    process.stderr.write(`  rebuilt in ${seconds(rebuild.msFromStart)} s; bare consumer ...\n`);
    const bare = await bareRead(kafka, topic, total);
    process.stderr.write(`  bare read in ${seconds(bare.ms)} s; engine alone ...\n`);
    const engine = engineOnly(SENSORS, startMs, minutes);
    const target = SENSORS === TARGET_SENSORS ? engine : engineOnly(TARGET_SENSORS, startMs, minutes);
    const perSec = (ms: number, n: number) => Math.round(n / (ms / 1000));
    // Per reading, a rebuild costs the engine's work plus the rest (fetch, decode, bookkeeping).
    // The rest does not depend on how many sensors there are; the engine's work does (a larger
    // working set), so the estimate swaps in the engine's per-reading cost at the target count.
    const rebuildMsPer = rebuild.msFromFirstClaim / total;
    const estimateMs = target.readings * (rebuildMsPer - engine.ms / total + target.ms / target.readings);
    const estimateCpuUs =
      target.readings * (rebuild.cpuUs / total - engine.cpuUs / total + target.cpuUs / target.readings);
    return {
      sensors: SENSORS,
      hours: HOURS,
      readings: total,
      produceSeconds: seconds(produceMs),
      rebuild: {
        seconds: seconds(rebuild.msFromStart),
        secondsFromFirstPartition: seconds(rebuild.msFromFirstClaim),
        readingsPerSec: perSec(rebuild.msFromFirstClaim, total),
        cpuUsPerReading: perReading(rebuild.cpuUs, total),
        sensorsRebuilt: rebuild.sensors,
        rssMbAfter: rebuild.rssMb,
      },
      bareKafkajs: {
        seconds: seconds(bare.ms),
        messagesTimed: bare.messages,
        readingsPerSec: perSec(bare.ms, bare.messages),
        cpuUsPerReading: perReading(bare.cpuUs, bare.messages),
      },
      engineOnly: {
        seconds: seconds(engine.ms),
        readingsPerSec: perSec(engine.ms, total),
        cpuUsPerReading: perReading(engine.cpuUs, total),
      },
      rebuildOverBareTime: Number(
        (rebuild.msFromFirstClaim / ((bare.ms * total) / bare.messages)).toFixed(2),
      ),
      rebuildOverEngineTime: Number((rebuild.msFromFirstClaim / engine.ms).toFixed(2)),
      target: {
        sensors: TARGET_SENSORS,
        readings: target.readings,
        measured: SENSORS === TARGET_SENSORS,
        engineOnlySeconds: seconds(target.ms),
        engineOnlyCpuUsPerReading: perReading(target.cpuUs, target.readings),
        rebuildSeconds: seconds(SENSORS === TARGET_SENSORS ? rebuild.msFromFirstClaim : estimateMs),
        rebuildCpuSeconds: seconds(estimateCpuUs / 1000),
      },
      note:
        'warm start (the path a keys_lost rebuild takes too) in this process; rebuild.seconds = start() to every partition rebuilt (includes the group join), secondsFromFirstPartition = first partition claimed to last rebuilt. ' +
        (SENSORS === TARGET_SENSORS
          ? 'target measured through Kafka.'
          : `target ESTIMATED: the measured rebuild per reading at ${SENSORS} sensors, with the engine's share replaced by the engine alone measured at ${TARGET_SENSORS} sensors, times the target's readings.`),
    };
  } finally {
    // Removing a 1.5 GB topic can take the broker longer than kafkajs' 5 s default.
    await admin
      .deleteTopics({ topics: [topic, alertTopic], timeout: 60_000 })
      .catch((e: unknown) =>
        process.stderr.write(
          `  could not delete ${topic}, ${alertTopic}: ${String(e)}; delete them by hand\n`,
        ),
      );
    await admin.disconnect();
    proc.kill('SIGTERM');
  }
}
