/**
 * Live monitor benchmark (needs the local stack: Kafka, and a redis-server binary for a private Redis).
 *  - throughput: readings/s through the monitor (in-process, same code as `streamfence run`) vs a
 *    bare kafkajs consumer reading the same topic in the same run; both timed first to last message;
 *    on ISO-8601 and on epoch-millisecond timestamps, PASSES passes each, the median reported;
 *  - where the time goes: a CPU profile of the monitor's throughput pass, self time per area
 *    (STREAMFENCE_BENCH_CPU_PROFILE=<dir> also writes the .cpuprofile files), and the share of the
 *    timed wall time spent inside checkpoints (batches wait meanwhile);
 *  - scaling: aggregate readings/s of 1 and of 2 monitor processes (the built CLI) in one group on
 *    one topic, and each process's peak RSS;
 *  - Redis commands per 1,000 readings: INFO commandstats delta on a private redis-server;
 *  - restart: time for a fresh monitor to take over 10,000 sensors' checkpoints and catch up;
 *  - latency: reading-to-alert (alert received minus reading time) at a steady 5,000 readings/s.
 */
import { createTopicsWithLeaders } from '../../services/connect/topics.js';
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { Session } from 'node:inspector/promises';
import { freePort, privateRedis } from './private-redis.js';
import { loadavg, tmpdir } from 'node:os';
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

/** Passes per timestamp form (median reported): the machine is shared, one pass can be disturbed. */
const PASSES = Number(process.env.STREAMFENCE_BENCH_PASSES ?? 3);
type TsForm = 'iso' | 'epoch';
const TS_FORMS: readonly TsForm[] = (process.env.STREAMFENCE_BENCH_TS ?? 'iso,epoch').split(',') as TsForm[];
/** Sections to run (comma list); all by default. */
const SECTIONS = new Set(
  (process.env.STREAMFENCE_BENCH_MONITOR ?? 'throughput,scaling,restart,latency').split(','),
);
const PROFILE_DIR = process.env.STREAMFENCE_BENCH_CPU_PROFILE ?? null;
/** Readings per sensor of the scaling topic: long enough for a steady window after the group settles. */
const SCALING_PER_SENSOR = 60;

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
const brokers = () => (process.env.STREAMFENCE_TEST_BROKERS ?? '127.0.0.1:9092').split(',');
const name = (p: string) => `bench-${p}-${process.pid}-${Date.now().toString(36)}`;

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
    // A topic just created may not be served by every partition's leader yet: retry a while.
    for (let attempt = 0; ; attempt++) {
      try {
        await p.send({ topic, acks: -1, messages: msgs.slice(i, i + 5_000) });
        break;
      } catch (e) {
        if (attempt >= 20) throw e;
        await sleep(500);
      }
    }
  }
  await p.disconnect();
}

function readings(
  sensors: number,
  perSensor: number,
  t0: number,
  seed: number,
  form: TsForm = 'epoch',
): { key: string; value: string }[] {
  const rnd = mulberry32(seed);
  const out: { key: string; value: string }[] = [];
  for (let k = 0; k < perSensor; k++) {
    for (let i = 0; i < sensors; i++) {
      const sensor = `press-${Math.floor(i / 100)}.line-${i % 100}`;
      const value = 50 + (i % 17) + (rnd() - 0.5) * 2 + (rnd() < 0.01 ? 30 : 0);
      const epoch = t0 + k * STEP_MS;
      // ISO with a zone offset, as plants send it ("+01:00" local time), or epoch milliseconds.
      const ts = form === 'iso' ? isoWithOffset(epoch, 60) : epoch;
      out.push({ key: sensor, value: JSON.stringify({ sensor, ts, value }) });
    }
  }
  return out;
}

/** `epoch` as ISO-8601 local time at `offsetMin` minutes east of UTC, with milliseconds: 2026-05-01T01:00:06.000+01:00. */
function isoWithOffset(epoch: number, offsetMin: number): string {
  const local = new Date(epoch + offsetMin * 60_000).toISOString().slice(0, -1);
  const sign = offsetMin < 0 ? '-' : '+';
  const abs = Math.abs(offsetMin);
  const hh = String(Math.floor(abs / 60)).padStart(2, '0');
  const mm = String(abs % 60).padStart(2, '0');
  return `${local}${sign}${hh}:${mm}`;
}

const round1 = (x: number) => Math.round(x * 10) / 10;

const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const mid = Math.floor(s.length / 2);
  return s.length % 2 ? s[mid] : (s[mid - 1] + s[mid]) / 2;
};

interface ProfileNode {
  id: number;
  callFrame: { functionName: string; url: string };
  children?: number[];
}
interface CpuProfile {
  nodes: ProfileNode[];
  samples: number[];
  timeDeltas: number[];
}

/** Where a profile frame's time belongs, by its source file; null = ask the caller's frame. */
const PROFILER = '(the profiler starting)';
function area(url: string, fn: string): string | null {
  if (url === 'node:inspector') return PROFILER;
  if (fn === '(garbage collector)') return 'garbage collection';
  if (fn === '(idle)') return 'idle (waiting on Kafka, Redis)';
  if (/\/services\/monitor\/kafka-message|\/libs\/engine\/(reading|reading-scan|iso-time)\./.test(url))
    return 'decode (message -> reading)';
  if (/\/libs\/engine\/(sensor-state|bytes)\./.test(url)) return 'checkpoint encode';
  if (/\/libs\//.test(url)) return 'engine (window, digests, rules, events)';
  if (/\/services\/monitor\/monitor\./.test(url)) return 'monitor loop (event JSON, bookkeeping)';
  if (/\/services\/redis\/|\/node_modules\/(ioredis|redis-parser|redis-errors|denque|@ioredis)\//.test(url))
    return 'Redis (checkpoint save)';
  if (/\/node_modules\/kafkajs\/src\/(producer|protocol\/requests\/produce)/.test(url))
    return 'produce (alerts)';
  if (/\/node_modules\/kafkajs\/src\/(consumer|protocol\/requests\/fetch|protocol\/recordBatch)/.test(url))
    return 'kafkajs fetch + record decode';
  if (/\/node_modules\/kafkajs\//.test(url)) return 'kafkajs other (protocol, network)';
  if (/\/node_modules\/prom-client\//.test(url)) return 'metrics';
  if (/\/test\/bench\//.test(url)) return 'bench harness (polling)';
  return null;
}

/** Self time per area, in percent of the profiled wall time (a frame without an area takes its caller's). */
function breakdown(profile: CpuProfile): Record<string, number> {
  const byId = new Map(profile.nodes.map((n) => [n.id, n]));
  const parent = new Map<number, number>();
  for (const n of profile.nodes) for (const c of n.children ?? []) parent.set(c, n.id);
  const memo = new Map<number, string>();
  const areaOf = (id: number): string => {
    const known = memo.get(id);
    if (known) return known;
    const n = byId.get(id)!;
    const up = parent.get(id);
    const a =
      area(n.callFrame.url, n.callFrame.functionName) ??
      (up === undefined ? 'node runtime (sockets, buffers, timers)' : areaOf(up));
    memo.set(id, a);
    return a;
  };
  const micros = new Map<string, number>();
  let total = 0;
  for (let i = 0; i < profile.samples.length; i++) {
    const dt = profile.timeDeltas[i] ?? 0;
    const a = areaOf(profile.samples[i]);
    if (a === PROFILER) continue;
    micros.set(a, (micros.get(a) ?? 0) + dt);
    total += dt;
  }
  const out: Record<string, number> = {};
  for (const [a, us] of [...micros].sort((x, y) => y[1] - x[1]))
    out[a] = Number(((100 * us) / total).toFixed(1));
  return out;
}

/** The V8 CPU profiler of this process, started and stopped around the timed part of a pass. */
class Profiler {
  private readonly session = new Session();
  async start(): Promise<void> {
    this.session.connect();
    await this.session.post('Profiler.enable');
    await this.session.post('Profiler.setSamplingInterval', { interval: 500 });
    await this.session.post('Profiler.start');
  }
  /** Stop; the profile is returned (and written to `file`). */
  async stop(file: string | null): Promise<CpuProfile> {
    const { profile } = await this.session.post('Profiler.stop');
    this.session.disconnect();
    if (file) writeFileSync(file, JSON.stringify(profile));
    return profile as unknown as CpuProfile;
  }
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
/** CPU time (user + system, every thread of this process) since `from`, in microseconds. */
function cpuSince(from: NodeJS.CpuUsage): number {
  const d = process.cpuUsage(from);
  return d.user + d.system;
}

async function bareConsume(
  kafka: Kafka,
  topic: string,
  total: number,
): Promise<{ ms: number; cpuUs: number }> {
  const consumer: Consumer = kafka.consumer({ groupId: name('bare'), maxBytesPerPartition: 1_048_576 });
  await consumer.connect();
  await consumer.subscribe({ topic, fromBeginning: true });
  let n = 0;
  let first = 0;
  let cpu0 = process.cpuUsage();
  const timed = await new Promise<{ ms: number; cpuUs: number }>((resolve) => {
    void consumer.run({
      eachBatchAutoResolve: true,
      eachBatch: async ({ batch }) => {
        if (first === 0) {
          first = performance.now();
          cpu0 = process.cpuUsage();
        }
        n += batch.messages.length;
        if (n >= total) resolve({ ms: performance.now() - first, cpuUs: cpuSince(cpu0) });
      },
    });
  });
  await consumer.disconnect();
  return timed;
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

interface ThroughputPass {
  bareKafkajsPerSec: number;
  monitorPerSec: number;
  ratioToBare: number;
  engineOnlyPerSec: number;
  /** CPU microseconds per reading (this process, all threads), bare consumer and monitor. */
  bareCpuUsPerReading: number;
  monitorCpuUsPerReading: number;
  /** Bare CPU per message over monitor CPU per reading: the ratio with the machine's sharing taken out. */
  cpuRatioToBare: number;
  /** Share of the monitor's timed wall time spent inside checkpoints (no batch runs meanwhile). */
  checkpointWallShare: number;
}

/** The monitor in this process on `topic` from its start, timed from the first to the last reading counted. */
async function monitorPass(
  mkKafka: () => Kafka,
  redisUrl: string,
  topic: string,
  alertTopic: string,
  total: number,
  log: ReturnType<typeof createLogger>,
  profiler: Profiler | null,
  profileFile: string | null,
): Promise<{
  ms: number;
  cpuUs: number;
  checkpointMs: number;
  prefix: string;
  group: string;
  profile: CpuProfile | null;
}> {
  const config: EngineConfig = parseConfigText(BENCH_CONFIG, 'bench');
  const prefix = name('sf');
  const group = name('g');
  const metrics = createMetrics({ defaultMetrics: false });
  const redis = buildRedis({ url: redisUrl });
  const mon = new Monitor({
    kafka: mkKafka(),
    redis,
    config,
    settings: settings(topic, prefix, group, alertTopic),
    log,
    metrics,
  });
  const checkpointClock = timeCheckpoints(mon);
  await mon.start();
  let first = 0;
  let cpu0 = process.cpuUsage();
  for (;;) {
    const n = await counted(metrics);
    if (n > 0 && first === 0) {
      first = performance.now();
      cpu0 = process.cpuUsage();
      checkpointClock.reset();
      await profiler?.start();
    }
    if (n >= total) break;
    await sleep(5);
  }
  const ms = performance.now() - first;
  const cpuUs = cpuSince(cpu0);
  const checkpointMs = checkpointClock.ms();
  const profile = profiler ? await profiler.stop(profileFile) : null;
  await mon.stop();
  redis.disconnect();
  return { ms, cpuUs, checkpointMs, prefix, group, profile };
}

/**
 * Wall time spent inside the monitor's checkpoints (flush wait, encode, Redis save, offset commit),
 * during which no batch is processed (they share the partition lock). Measured by wrapping the
 * private method: the bench's view only, the monitor is unchanged.
 */
function timeCheckpoints(mon: Monitor): { reset: () => void; ms: () => number } {
  const target = mon as unknown as { checkpoint: (...args: unknown[]) => Promise<boolean> };
  const original = target.checkpoint.bind(mon);
  let spent = 0;
  target.checkpoint = async (...args: unknown[]) => {
    const t0 = performance.now();
    try {
      return await original(...args);
    } finally {
      spent += performance.now() - t0;
    }
  };
  return { reset: () => (spent = 0), ms: () => spent };
}

/** The engine alone (parse + judge, no Kafka, no Redis): the ceiling the monitor can reach. */
function engineOnly(msgs: { value: string }[]): number {
  const solo = new Engine(parseConfigText(BENCH_CONFIG, 'bench'));
  const e0 = performance.now();
  for (const m of msgs) {
    const r = parseJsonReading(m.value);
    if (r.ok) solo.process(r.reading);
  }
  return msgs.length / ((performance.now() - e0) / 1000);
}

async function throughput(
  kafka: Kafka,
  mkKafka: () => Kafka,
  redisUrl: string,
  probe: Redis,
  alertTopic: string,
  form: TsForm,
  log: ReturnType<typeof createLogger>,
): Promise<Record<string, unknown>> {
  const topic = name(`in-${form}`);
  const admin = kafka.admin();
  await admin.connect();
  await createTopicsWithLeaders(admin, [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }]);
  try {
    const msgs = readings(SENSORS, PER_SENSOR, Date.UTC(2026, 4, 1), 1, form);
    await produce(kafka, topic, msgs);
    const passes: ThroughputPass[] = [];
    let redisFigures: Record<string, unknown> = {};
    let areas: Record<string, number> = {};
    for (let pass = 0; pass < PASSES; pass++) {
      const bare = await bareConsume(kafka, topic, msgs.length);
      const engineRate = engineOnly(msgs);
      const before = await totalCommands(probe);
      // The last pass runs under the profiler, from the first reading counted to the stop (sampling
      // costs a little; its figures are kept too).
      const profiler = pass === PASSES - 1 ? new Profiler() : null;
      if (PROFILE_DIR) mkdirSync(PROFILE_DIR, { recursive: true });
      const file = PROFILE_DIR ? join(PROFILE_DIR, `monitor-${form}.cpuprofile`) : null;
      const run = await monitorPass(mkKafka, redisUrl, topic, alertTopic, msgs.length, log, profiler, file);
      if (run.profile) areas = breakdown(run.profile);
      await waitCheckpointed(probe, run.prefix, run.group, topic, kafka, 30_000);
      const after = await totalCommands(probe);
      const bareRate = msgs.length / (bare.ms / 1000);
      const monRate = msgs.length / (run.ms / 1000);
      const bareCpu = bare.cpuUs / msgs.length;
      const monCpu = run.cpuUs / msgs.length;
      passes.push({
        bareKafkajsPerSec: Math.round(bareRate),
        monitorPerSec: Math.round(monRate),
        ratioToBare: Number((monRate / bareRate).toFixed(3)),
        engineOnlyPerSec: Math.round(engineRate),
        bareCpuUsPerReading: Number(bareCpu.toFixed(2)),
        monitorCpuUsPerReading: Number(monCpu.toFixed(2)),
        cpuRatioToBare: Number((bareCpu / monCpu).toFixed(3)),
        checkpointWallShare: Number((run.checkpointMs / run.ms).toFixed(3)),
      });
      if (pass === 0) {
        const perCommand: Record<string, number> = {};
        for (const [k, v] of Object.entries(after.byCommand)) {
          const d = v - (before.byCommand[k] ?? 0);
          if (d > 0) perCommand[k] = d;
        }
        redisFigures = {
          commandsPer1000Readings: Number((((after.total - before.total) / msgs.length) * 1000).toFixed(2)),
          note: 'INFO commandstats on a private redis-server; counts commands run inside Lua scripts, and this benchmark INFO/GET polling',
          byCommand: perCommand,
        };
      }
    }
    const med = (k: keyof ThroughputPass) => median(passes.map((p) => p[k]));
    return {
      ts: form,
      readings: msgs.length,
      sensors: SENSORS,
      partitions: PARTITIONS,
      passes,
      median: {
        bareKafkajsPerSec: Math.round(med('bareKafkajsPerSec')),
        monitorPerSec: Math.round(med('monitorPerSec')),
        ratioToBare: Number(med('ratioToBare').toFixed(3)),
        engineOnlyPerSec: Math.round(med('engineOnlyPerSec')),
        bareCpuUsPerReading: Number(med('bareCpuUsPerReading').toFixed(2)),
        monitorCpuUsPerReading: Number(med('monitorCpuUsPerReading').toFixed(2)),
        cpuRatioToBare: Number(med('cpuRatioToBare').toFixed(3)),
        checkpointWallShare: Number(med('checkpointWallShare').toFixed(3)),
      },
      profileSelfTimePercent: areas,
      redis: redisFigures,
    };
  } finally {
    await admin.deleteTopics({ topics: [topic] }).catch(() => undefined);
    await admin.disconnect();
  }
}

/** Peak resident set of a process (VmHWM), in MB; null when /proc is not there. */
function peakRssMb(pid: number): number | null {
  try {
    const m = /VmHWM:\s+(\d+) kB/.exec(readFileSync(`/proc/${pid}/status`, 'utf8'));
    return m ? Math.round(Number(m[1]) / 1024) : null;
  } catch {
    return null;
  }
}

async function getText(url: string): Promise<string | null> {
  try {
    const res = await fetch(url);
    return await res.text();
  } catch {
    return null;
  }
}

/** The built CLI's `run` as a child process: the production path, its own event loop and heap. */
function spawnMonitor(args: {
  redisUrl: string;
  prefix: string;
  group: string;
  topic: string;
  alertTopic: string;
  configFile: string;
  metricsPort: number;
}): ChildProcess {
  return spawn(
    process.execPath,
    [
      CLI,
      'run',
      '--brokers',
      brokers().join(','),
      '--redis',
      args.redisUrl,
      '--state-prefix',
      args.prefix,
      '--input-topic',
      args.topic,
      '--alert-topic',
      args.alertTopic,
      '--rejected-topic',
      args.alertTopic,
      '--group',
      args.group,
      '--config',
      args.configFile,
      '--metrics-port',
      String(args.metricsPort),
      '--session-timeout-ms',
      '6000',
      // The topic is filled before the processes start.
      '--start-from',
      'earliest',
      '--log-level',
      'warn',
    ],
    { stdio: 'ignore' },
  );
}

/**
 * Aggregate readings/s of `processes` monitor processes in one group on a pre-filled topic. Timed
 * over a steady window: from the first moment every partition is held by exactly one process (each
 * process holding some) to 90 % of the topic counted, so the group join and hand-overs are outside it.
 */
async function scalingRun(
  processes: number,
  redisUrl: string,
  topic: string,
  alertTopic: string,
  total: number,
  configFile: string,
): Promise<Record<string, unknown>> {
  const group = name('g');
  const prefix = name('sf');
  const ports: number[] = [];
  const procs: ChildProcess[] = [];
  for (let i = 0; i < processes; i++) {
    const metricsPort = await freePort();
    ports.push(metricsPort);
    procs.push(spawnMonitor({ redisUrl, prefix, group, topic, alertTopic, configFile, metricsPort }));
  }
  try {
    let start: { t: number; n: number } | null = null;
    const deadline = Date.now() + 120_000;
    for (;;) {
      if (Date.now() > deadline) throw new Error(`${processes} monitor process(es) did not finish ${topic}`);
      for (const p of procs)
        if (p.exitCode !== null) throw new Error(`a monitor under test exited early (code ${p.exitCode})`);
      const t = performance.now();
      const [texts, ready] = await Promise.all([
        Promise.all(ports.map((port) => getText(`http://127.0.0.1:${port}/metrics`))),
        Promise.all(ports.map((port) => getText(`http://127.0.0.1:${port}/readyz`))),
      ]);
      let n = 0;
      for (const text of texts)
        for (const m of (text ?? '').matchAll(/^streamfence_readings_total\{[^}]*\} (\d+)/gm))
          n += Number(m[1]);
      const held = ready.map((r) => {
        try {
          return (JSON.parse(r ?? '{}') as { partitions?: number[] }).partitions ?? [];
        } catch {
          return [];
        }
      });
      const all = held.flat();
      const settled =
        new Set(all).size === PARTITIONS && all.length === PARTITIONS && held.every((h) => h.length > 0);
      if (settled && start === null) start = { t, n };
      if (!settled) start = null;
      if (start !== null && n >= 0.9 * total) {
        return {
          processes,
          readingsPerSec: Math.round((n - start.n) / ((t - start.t) / 1000)),
          windowReadings: n - start.n,
          peakRssMb: procs.map((p) => peakRssMb(p.pid!)),
        };
      }
      await sleep(100);
    }
  } finally {
    for (const p of procs) if (p.exitCode === null) p.kill('SIGTERM');
    await Promise.all(procs.map((p) => (p.exitCode === null ? new Promise((r) => p.once('exit', r)) : null)));
  }
}

async function scaling(kafka: Kafka, redisUrl: string, alertTopic: string): Promise<Record<string, unknown>> {
  const admin = kafka.admin();
  await admin.connect();
  const cfgDir = mkdtempSync(join(tmpdir(), 'sf-bench-'));
  const configFile = join(cfgDir, 'engine.yaml');
  writeFileSync(configFile, BENCH_CONFIG);
  const runs: Record<string, unknown>[] = [];
  const topics: string[] = [];
  try {
    const msgs = readings(SENSORS, SCALING_PER_SENSOR, Date.UTC(2026, 4, 1), 5, 'iso');
    // One topic per run: each run reads its topic from the start, with no hand-over from the last.
    for (let pass = 0; pass < PASSES; pass++) {
      for (const processes of [1, 2]) {
        const topic = name(`scale-${processes}`);
        topics.push(topic);
        await createTopicsWithLeaders(admin, [{ topic, numPartitions: PARTITIONS, replicationFactor: 1 }]);
        await produce(kafka, topic, msgs);
        runs.push({
          pass,
          ...(await scalingRun(processes, redisUrl, topic, alertTopic, msgs.length, configFile)),
        });
        await admin.deleteTopics({ topics: [topic] }).catch(() => undefined);
      }
    }
  } finally {
    await admin.deleteTopics({ topics }).catch(() => undefined);
    await admin.disconnect();
  }
  const rate = (p: number) =>
    median(runs.filter((r) => r.processes === p).map((r) => r.readingsPerSec as number));
  return {
    readings: SENSORS * SCALING_PER_SENSOR,
    sensors: SENSORS,
    partitions: PARTITIONS,
    ts: 'iso',
    runs,
    medianReadingsPerSec: { one: Math.round(rate(1)), two: Math.round(rate(2)) },
    twoOverOne: Number((rate(2) / rate(1)).toFixed(2)),
    note: 'built CLI processes in one group; steady window from settled assignment to 90 % of the topic counted',
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
  await createTopicsWithLeaders(
    admin,
    [topic, alertTopic, latTopic, latAlerts].map((t) => ({
      topic: t,
      numPartitions: PARTITIONS,
      replicationFactor: 1,
    })),
  );
  const out: Record<string, unknown> = { passes: PASSES };
  const probe = new Redis(url);
  const config: EngineConfig = parseConfigText(BENCH_CONFIG, 'bench');
  const redis = buildRedis({ url });
  try {
    // The machine is shared: each section says how busy it was (1-minute load average, 2 cores).
    const loaded = async (section: () => Promise<Record<string, unknown>>) => {
      const before = loadavg()[0];
      const figures = await section();
      return { ...figures, loadAverage: { start: round1(before), end: round1(loadavg()[0]) } };
    };
    if (SECTIONS.has('throughput'))
      for (const form of TS_FORMS)
        out[`throughput_${form}`] = await loaded(() =>
          throughput(kafka, mkKafka, url, probe, alertTopic, form, log),
        );
    if (SECTIONS.has('scaling')) out.scaling = await loaded(() => scaling(kafka, url, alertTopic));
    const prefix = name('sf');
    const group = name('g');
    if (SECTIONS.has('restart')) {
      // A first monitor reads 10,000 sensors' readings and checkpoints them.
      const first = readings(SENSORS, PER_SENSOR, Date.UTC(2026, 4, 1), 1);
      await produce(kafka, topic, first);
      let mon = new Monitor({
        kafka: mkKafka(),
        redis,
        config,
        settings: settings(topic, prefix, group, alertTopic),
        log,
        metrics: createMetrics({ defaultMetrics: false }),
      });
      await mon.start();
      await waitCheckpointed(probe, prefix, group, topic, kafka, 60_000);
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
    }

    if (SECTIONS.has('latency')) {
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
      const q = (p: number) =>
        lat.length ? lat[Math.min(lat.length - 1, Math.floor(p * lat.length))] : null;
      out.latency = {
        readingsPerSec: Math.round(sent / seconds),
        alertsMeasured: lat.length,
        p50Ms: q(0.5),
        p99Ms: q(0.99),
        note: 'alert received by a consumer minus the reading event time (set at production); includes producer batching (50 ms ticks)',
      };
    }
  } finally {
    redis.disconnect();
    probe.disconnect();
    await admin.deleteTopics({ topics: [topic, alertTopic, latTopic, latAlerts] }).catch(() => undefined);
    await admin.disconnect();
    proc.kill('SIGTERM');
  }
  return out;
}
