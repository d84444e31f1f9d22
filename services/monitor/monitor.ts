/**
 * The live monitor: a kafkajs consumer group on the input topic, one Engine per owned partition,
 * alert events out to Kafka, partition checkpoints in Redis.
 *
 * Exactness rests on three rules:
 *  1. A partition's Redis checkpoint (sensor states + the next offset) is the truth. On taking a
 *     partition the monitor claims it, loads the checkpoint and reads from that offset: earlier
 *     messages are skipped, later ones are (re-)processed, so each reading counts exactly once.
 *  2. Alert events and rejections are awaited on Kafka (acks=all, idempotent producer) before any
 *     checkpoint that covers their readings: after a crash they may be sent again (same ids), never
 *     lost.
 *  3. Checkpoints are fenced by an owner token: a monitor that lost a partition cannot overwrite
 *     the new owner's checkpoint; it drops its copy instead.
 * All partition work (batches, checkpoints, hand-overs) runs one at a time under one lock.
 */
import { randomUUID } from 'node:crypto';
import kafkajs, {
  Partitioners,
  type Admin,
  type Consumer,
  type EachBatchPayload,
  type Kafka,
  type Message,
  type Producer,
} from 'kafkajs';
import { isClusterClient, redisAnswers, type RedisClient } from '../connect/index.js';

import { Engine } from '../../libs/engine/engine.js';
import { DEFAULT_MAX_SENSORS, SensorBudget } from '../../libs/engine/sensor-budget.js';
import type { EngineConfig } from '../../libs/config/config.js';
import { configToJson } from '../../libs/config/config.js';
import { historyNeeded } from '../../libs/config/history-span.js';
import { formatDuration } from '../../libs/config/duration.js';
import type { RejectReason } from '../../libs/engine/reading.js';
import type { Logger } from '../log.js';
import type { Metrics } from '../metrics/metrics.js';
import { CheckpointStore, type ExpectedOffset } from '../redis/checkpoint-store.js';
import { configKey } from '../redis/keys.js';
import { StreamfenceError } from '../../libs/errors/index.js';
import type { KafkaSettings, RedisSettings } from '../connect/options.js';
import {
  kafkaLogError,
  kafkaOutage,
  redisOutage,
  retryLine,
  RedisErrorWatch,
  type Outage,
} from '../connect/outage.js';
import { backoffDelay, withBackoff, type BackoffHooks } from './backoff.js';
import { parseMessage, rejectionRecord } from './kafka-message.js';
import { partitionSends, requestChunks } from './partition-sends.js';
import { CommitHints } from './commit-hints.js';

// kafkajs is CommonJS: its enums come through the default export under ESM.
const { ConfigResourceTypes } = kafkajs;

/** Where a monitor starts on a partition that has neither a checkpoint nor a committed offset. */
export const START_FROM = ['now', 'earliest'] as const;
export type StartFrom = (typeof START_FROM)[number];

export interface MonitorSettings {
  statePrefix: string;
  inputTopic: string;
  alertTopic: string;
  rejectedTopic: string;
  group: string;
  checkpointMs: number;
  checkpointReadings: number;
  sessionTimeoutMs: number;
  /** Most sensors this process holds (default DEFAULT_MAX_SENSORS). */
  maxSensors?: number;
  /**
   * A partition with no checkpoint and no committed offset: `now` (the default) starts at the end
   * the topic had when this monitor started, `earliest` at the oldest message Kafka still holds.
   */
  startFrom?: StartFrom;
  /**
   * A first deployment (no checkpoint, no committed offset) learns from the history before its
   * start point (window + one bucket, see historyNeeded) before judging, as after a state loss.
   */
  warmStart?: boolean;
}

/** What a Monitor is built from: clients (from services/connect), the engine config, settings, log and metrics. */
export interface MonitorParts {
  kafka: Kafka;
  redis: RedisClient;
  config: EngineConfig;
  settings: MonitorSettings;
  log: Logger;
  metrics: Metrics;
  /**
   * The settings the clients were built from, to name the address in retry lines
   * (`redis 127.0.0.1:6399: connection refused; retrying in 5 s`). Optional for benches.
   */
  connection?: { kafka: KafkaSettings; redis: RedisSettings };
  /**
   * Judges a failure while starting: a refusal no retry can cure (wrong password, denied ACL,
   * untrusted certificate) is returned and start() fails with it, so `run` exits 2 with that line
   * instead of retrying for ever. Null (the default) means wait and retry.
   */
  startRefusal?: (dependency: 'kafka' | 'redis', err: unknown) => Error | null;
}

/** How a stop ended: every held partition checkpointed (or none held), or not. */
export interface StopOutcome {
  clean: boolean;
  /** Partitions whose state could not be written (their next owner re-reads from the last checkpoint). */
  notCheckpointed: number[];
}

interface PartitionWorker {
  partition: number;
  engine: Engine;
  /**
   * Next offset to process: the in-memory state holds exactly the readings before it. Offsets are
   * kept as numbers (exact up to 2^53, far beyond any real partition) because this is per message.
   */
  next: number;
  /** Offset stored with the last successful checkpoint (-1 before the first). */
  checkpointed: number;
  dirty: Set<string>;
  sinceCheckpoint: number;
  /** First batch after a claim: verify it starts at `next` (seek there once if it does not). */
  start: 'verify' | 'seeked' | 'done';
  /** Set while history is re-read to rebuild the baselines (nothing is published meanwhile). */
  rebuild: RebuildPlan | null;
}

/** Why baselines are rebuilt from the input topic (the `cause` of streamfence_state_rebuilds_total). */
type RebuildCause = 'keys_lost' | 'warm_start';

/**
 * Re-reading a partition's history before the point where judging resumes. Phase `locate` reads
 * the message just before that point for its Kafka time; `read` feeds the readings from the
 * offset for (that time - historyNeeded) into the engine, publishing no alert event and no reject.
 */
interface RebuildPlan {
  cause: RebuildCause;
  /** Judging resumes at this offset: the offsets before it only feed the baselines. */
  until: number;
  phase: 'locate' | 'read';
  /** The partition's oldest offset when the rebuild was planned. */
  low: number;
  /** Kafka time from which history is wanted (known once located). */
  wantedFromMs: number;
  /** Kafka time of the first message re-read (null before one). */
  firstReadMs: number | null;
  /** The re-read starts at the oldest message kept: history before it may be missing. */
  fromOldest: boolean;
  readings: number;
  startedAt: number;
}

/** Messages waiting to be published; always emptied before a checkpoint. */
interface Outbox {
  alerts: Message[];
  rejects: Message[];
}

// Publish in slices so a long batch does not hold unsent events, and heartbeats keep flowing.
const FLUSH_EVERY = 2_000;

/** A URL naming the client's server (or a cluster's seeds), for wording outages without settings. */
function redisUrlOf(redis: RedisClient): string {
  if (isClusterClient(redis)) {
    const seeds = redis.nodes().map((n) => `${n.options.host ?? '127.0.0.1'}:${n.options.port ?? 6379}`);
    return `redis+cluster://${seeds.join(',') || '127.0.0.1:6379'}`;
  }
  const o = (redis as { options: { host?: string; port?: number } }).options;
  return `redis://${o.host ?? '127.0.0.1'}:${o.port ?? 6379}`;
}

/** Alert and reject messages that may wait for Kafka's acknowledgement before a batch waits too. */
const MAX_UNSENT = 20_000;

export class Monitor {
  readonly token = randomUUID();
  private readonly workers = new Map<number, PartitionWorker>();
  private readonly outbox: Outbox = { alerts: [], rejects: [] };
  /** The chain of alert/reject sends in flight, and how many messages it still holds. */
  private sending: Promise<void> = Promise.resolve();
  private unsent = 0;
  /**
   * Partitions of the alert and rejected topics when this monitor started: each message is sent
   * to its partition by key over this count (a partition added later is used after a restart).
   */
  private readonly publishPartitions = new Map<string, number>();
  private readonly store: CheckpointStore;
  /** Shared by every partition's engine: the sensor limit is per process. */
  private readonly budget: SensorBudget;
  private consumer: Consumer;
  /** Offset commits (hints), sent off the partition lock. */
  private readonly commits: CommitHints;
  private readonly producer: Producer;
  private readonly admin: Admin;
  private lockTail: Promise<unknown> = Promise.resolve();
  private assigned = new Set<number>();
  /** Each input partition's end offset when this monitor started: where `now` starts. */
  private startOffsets = new Map<number, number>();
  /** Wall-clock time of the last message per assigned partition (its assignment time before one). */
  private readonly heardAt = new Map<number, number>();
  private joined = false;
  /** True once the consumer has joined its group for the first time: refusals are retried after. */
  private started = false;
  /** A refusal seen while starting (the consumer crashed for good): start() ends with it. */
  private startFailure: StreamfenceError | null = null;
  /** Kafka failed since the last heartbeat or batch: not ready. */
  private kafkaDown = false;
  /** Kafka calls of ours being retried now (their backoff logs the lines; see noteKafkaClientError). */
  private kafkaRetries = 0;
  /** Consumer restarts since it last joined (their wait grows). */
  private consumerRestarts = 0;
  /** Waits a stop request cuts short (backoff while starting). */
  private readonly stopWaiters = new Set<() => void>();
  private readonly redisWatch: RedisErrorWatch;
  private readonly kafkaSettings: KafkaSettings;
  private readonly redisSettings: RedisSettings;
  private stopping = false;
  /** After a stop request, dependency retries give up at this time (inside the 10 s stop budget). */
  private stopGiveUpAt = Infinity;
  private timer: NodeJS.Timeout | null = null;

  private readonly kafka: Kafka;
  private readonly redis: RedisClient;
  private readonly config: EngineConfig;
  private readonly settings: MonitorSettings;
  private readonly log: Logger;
  private readonly metrics: Metrics;
  private readonly startRefusal: NonNullable<MonitorParts['startRefusal']>;

  constructor(parts: MonitorParts) {
    const { kafka, redis, settings, metrics } = parts;
    this.kafka = kafka;
    this.redis = redis;
    this.config = parts.config;
    this.settings = settings;
    this.log = parts.log;
    this.metrics = metrics;
    this.redisWatch = new RedisErrorWatch(redis);
    this.kafkaSettings = parts.connection?.kafka ?? { brokers: ['(brokers)'] };
    this.redisSettings = parts.connection?.redis ?? { url: redisUrlOf(redis) };
    this.startRefusal = parts.startRefusal ?? (() => null);
    this.store = new CheckpointStore(
      redis,
      settings.statePrefix,
      settings.group,
      settings.inputTopic,
      this.token,
    );
    this.budget = new SensorBudget(settings.maxSensors ?? DEFAULT_MAX_SENSORS);
    metrics.sensorLimit.set(this.budget.limit);
    this.consumer = this.makeConsumer();
    this.commits = new CommitHints(
      (offsets) =>
        this.consumer.commitOffsets(offsets.map((o) => ({ topic: this.settings.inputTopic, ...o }))),
      (e) => this.log.debug({ err: errText(e) }, 'offset commit skipped'),
    );
    this.producer = kafka.producer({
      idempotent: true,
      maxInFlightRequests: 1,
      allowAutoTopicCreation: false,
      createPartitioner: Partitioners.DefaultPartitioner,
    });
    this.admin = kafka.admin();
  }

  private makeConsumer(): Consumer {
    const { settings } = this;
    return this.kafka.consumer({
      groupId: settings.group,
      sessionTimeout: settings.sessionTimeoutMs,
      rebalanceTimeout: Math.max(60_000, settings.sessionTimeoutMs),
      heartbeatInterval: Math.max(100, Math.floor(settings.sessionTimeoutMs / 10)),
      maxBytesPerPartition: 1_048_576,
      // A few quick retries inside kafkajs, then a restart after our own logged, counted wait:
      // never give up on the group while the failure is one waiting may fix.
      retry: {
        retries: 3,
        initialRetryTime: 300,
        maxRetryTime: 5_000,
        restartOnFailure: (e) => this.beforeRestart(e),
      },
    });
  }

  /**
   * Connect (retrying while dependencies are unreachable) and start consuming. A refusal waiting
   * cannot fix (wrong password, untrusted certificate, ACL denial, missing topic) ends it with its
   * StreamfenceError; a stop request ends the waiting at once (it resolves, not consuming).
   */
  async start(): Promise<void> {
    const refuse = (dependency: 'kafka' | 'redis') => ({
      fatal: (err: unknown) => this.startRefusal(dependency, err),
    });
    await this.retry('redis', () => this.redis.ping(), refuse('redis'));
    await this.retry(
      'redis',
      () =>
        this.redis.set(
          configKey(this.settings.statePrefix, this.settings.group, this.settings.inputTopic),
          JSON.stringify(configToJson(this.config)),
        ),
      refuse('redis'),
    );
    await this.retry('kafka', () => this.admin.connect());
    await this.requireTopics();
    await this.countPublishPartitions();
    const ends = await this.retry('kafka', () => this.admin.fetchTopicOffsets(this.settings.inputTopic));
    this.startOffsets = new Map(ends.map((o) => [o.partition, Number(o.high)]));
    await this.checkRetention();
    await this.retry('kafka', () => this.producer.connect());
    await this.startConsumer();
    if (this.startFailure) throw this.startFailure;
    if (this.stopping) return;
    this.timer = setInterval(() => {
      void this.locked(() => this.checkpointDue()).catch((e: unknown) =>
        this.log.error({ err: errText(e) }, 'periodic checkpoint failed'),
      );
      this.updateGauges();
      void this.readiness();
    }, this.settings.checkpointMs);
    this.log.info(
      { topic: this.settings.inputTopic, group: this.settings.group, owner: this.token },
      'consuming',
    );
  }

  /** Connect, subscribe and run the consumer (run() returns once it has joined, or crashed). */
  private async startConsumer(): Promise<void> {
    await this.retry('kafka', () => this.consumer.connect());
    this.wireEvents();
    await this.retry(
      'kafka',
      () => this.consumer.subscribe({ topic: this.settings.inputTopic, fromBeginning: true }),
      {},
      this.readWhat,
    );
    if (this.stopping) return;
    // Joining can take up to the group's rebalance timeout (other members must rejoin first).
    this.log.info(
      { group: this.settings.group, topic: this.settings.inputTopic },
      `joining group ${this.settings.group}`,
    );
    await this.consumer.run({
      autoCommit: false,
      eachBatchAutoResolve: false,
      partitionsConsumedConcurrently: 1,
      eachBatch: (p) => this.locked(() => this.onBatch(p)),
    });
  }

  /**
   * Warn (and set streamfence_input_retention_shortfall_seconds) when the input topic keeps less
   * time than a state rebuild needs: a Redis that comes back empty could then rebuild only part of
   * the window. One attempt: a user without DescribeConfigs on the topic is not kept waiting.
   */
  private async checkRetention(): Promise<void> {
    const needed = historyNeeded(this.config);
    try {
      const described = await withTimeout(
        this.admin.describeConfigs({
          includeSynonyms: false,
          resources: [
            {
              type: ConfigResourceTypes.TOPIC,
              name: this.settings.inputTopic,
              configNames: ['retention.ms'],
            },
          ],
        }),
        5_000,
      );
      const entry = described.resources[0]?.configEntries.find((c) => c.configName === 'retention.ms');
      const retention = Number(entry?.configValue ?? '-1');
      // -1: unlimited retention.
      const shortfall = retention < 0 ? 0 : Math.max(0, needed - retention);
      this.metrics.retentionShortfall.set(shortfall / 1000);
      if (shortfall > 0)
        this.log.warn(
          { topic: this.settings.inputTopic, retentionMs: retention, neededMs: needed },
          `input topic ${this.settings.inputTopic} keeps ${formatDuration(retention)} of readings but a state rebuild needs ${formatDuration(needed)} (window + one bucket); raise its retention.ms or a lost Redis state is rebuilt only in part`,
        );
    } catch (e) {
      this.log.info(
        { topic: this.settings.inputTopic, err: errText(e) },
        'could not read the input topic retention (DescribeConfigs); not checked',
      );
    }
  }

  /** The group's committed offset of a partition (the monitor commits after each checkpoint), or null. */
  private async committedOffset(partition: number): Promise<number | null> {
    const answer = await this.retry('kafka', () =>
      this.admin.fetchOffsets({ groupId: this.settings.group, topics: [this.settings.inputTopic] }),
    );
    const found = answer
      .find((t) => t.topic === this.settings.inputTopic)
      ?.partitions.find((p) => p.partition === partition);
    const offset = Number(found?.offset ?? '-1');
    return offset >= 0 ? offset : null;
  }

  /** The input, alert and rejected topics must exist (NOT_FOUND naming the first missing one). */
  private async requireTopics(): Promise<void> {
    const topics = new Set(await this.retry('kafka', () => this.admin.listTopics(), {}, 'list topics'));
    const { inputTopic, alertTopic, rejectedTopic } = this.settings;
    for (const [topic, option] of [
      [inputTopic, '--input-topic'],
      [alertTopic, '--alert-topic'],
      [rejectedTopic, '--rejected-topic'],
    ] as const) {
      if (!topics.has(topic))
        throw new StreamfenceError(
          'NOT_FOUND',
          `kafka ${this.kafkaSettings.brokers.join(',')}: topic "${topic}" (${option}) does not exist; check the name or create it first`,
        );
    }
  }

  /** How many partitions the alert and rejected topics have (see publishPartitions). */
  private async countPublishPartitions(): Promise<void> {
    const { alertTopic, rejectedTopic } = this.settings;
    const topics = [...new Set([alertTopic, rejectedTopic])];
    const meta = await this.retry(
      'kafka',
      () => this.admin.fetchTopicMetadata({ topics }),
      {},
      'describe topics',
    );
    for (const t of meta.topics) this.publishPartitions.set(t.name, t.partitions.length);
  }

  /** The partition count of a topic the monitor publishes to (counted at start). */
  private partitionsOf(topic: string): number {
    const count = this.publishPartitions.get(topic);
    if (count === undefined)
      throw new Error(`partition count of topic ${topic} not known (start() reads it)`);
    return count;
  }

  /**
   * Called by kafkajs before it restarts a consumer that failed: log and count the retry, wait our
   * own growing backoff (cut short by a stop request), then restart unless stopping.
   */
  private async beforeRestart(err: unknown): Promise<boolean> {
    if (this.stopping) return false;
    await this.consumerBackoff(err);
    return !this.stopping;
  }

  /** One more consumer restart: log and count it, then wait its growing backoff (a stop cuts it short). */
  private async consumerBackoff(err: unknown): Promise<void> {
    this.consumerRestarts++;
    const delayMs = backoffDelay(this.consumerRestarts, 500);
    this.noteRetry(this.describe('kafka', err, this.readWhat), delayMs, this.consumerRestarts);
    await this.pause(delayMs, true);
  }

  /**
   * kafkajs does not restart a consumer after an error it counts as final (a refusal, e.g. an ACL
   * removed while running): a fresh consumer joins again after a logged, counted wait.
   */
  private async replaceConsumer(err: unknown): Promise<void> {
    await this.consumerBackoff(err);
    if (this.stopping) return;
    await this.consumer.disconnect().catch(() => undefined);
    this.consumer = this.makeConsumer();
    await this.startConsumer().catch((e: unknown) => {
      if (!this.stopping) this.log.debug({ err: errText(e) }, 'consumer restart failed');
    });
  }

  /** The consumer's operation, for ACL wording: the topic and the group (either ACL may deny it). */
  private get readWhat(): string {
    return `read topic ${this.settings.inputTopic} in group ${this.settings.group}`;
  }

  /** Joined the group, Kafka and Redis answer (on a cluster every primary), not stopping. */
  async readiness(): Promise<{ ready: boolean; detail: Record<string, unknown> }> {
    // On a Redis Cluster: every primary of the slot map answers (see redisAnswers).
    const redis = await redisAnswers(this.redis, 1_000);
    const ready = this.joined && redis.ok && !this.kafkaDown && !this.stopping;
    this.metrics.ready.set(ready ? 1 : 0);
    return {
      ready,
      detail: {
        joined: this.joined,
        kafka: !this.kafkaDown,
        redis: redis.ok,
        ...(redis.primaries === undefined
          ? {}
          : { redisPrimaries: redis.primaries, redisSlotsDown: redis.slotsDown }),
        partitions: [...this.assigned].sort((a, b) => a - b),
      },
    };
  }

  /** True once stop() was called. */
  get stopRequested(): boolean {
    return this.stopping;
  }

  /**
   * Graceful stop: finish the batch, publish, checkpoint, commit, hand partitions back, leave.
   * Says only what happened: a partition whose checkpoint could not be written is named, never
   * reported as checkpointed.
   */
  async stop(): Promise<StopOutcome> {
    if (this.stopping) return { clean: true, notCheckpointed: [] };
    this.stopping = true;
    this.stopGiveUpAt = Date.now() + 6_000;
    for (const wake of [...this.stopWaiters]) wake();
    if (this.timer) clearInterval(this.timer);
    this.metrics.ready.set(0);
    this.log.info(
      this.started ? 'stopping: finishing the current batch' : 'stopping before the group was joined',
    );
    // While joining, kafkajs's stop waits for the join answer (up to the rebalance timeout): bound it.
    await withTimeout(this.consumer.stop(), this.started ? 4_000 : 1_500).catch(() => undefined);
    const notCheckpointed: number[] = [];
    let lastFailure: Outage | null = null;
    const held = this.workers.size;
    await this.locked(async () => {
      for (const w of [...this.workers.values()]) {
        try {
          if (await this.checkpoint(w)) await this.store.release(w.partition).catch(() => undefined);
        } catch (e) {
          notCheckpointed.push(w.partition);
          const last = e instanceof Error && 'lastError' in e ? (e as { lastError: unknown }).lastError : e;
          lastFailure = this.describe('redis', last);
        }
      }
    });
    // The last checkpoints' commits, before the consumer leaves (a hint; bounded like the rest).
    await withTimeout(this.commits.settled(), 1_500).catch(() => undefined);
    await withTimeout(this.consumer.disconnect(), 1_500).catch(() => undefined);
    await withTimeout(this.producer.disconnect(), 1_000).catch(() => undefined);
    await withTimeout(this.admin.disconnect(), 1_000).catch(() => undefined);
    if (notCheckpointed.length > 0) {
      this.log.warn(
        { partitions: notCheckpointed, cause: (lastFailure as Outage | null)?.line },
        `stopped WITHOUT a checkpoint of partitions ${notCheckpointed.join(', ')} (${(lastFailure as Outage | null)?.line ?? 'no answer'}); the next start re-reads them from their last checkpoint`,
      );
      return { clean: false, notCheckpointed };
    }
    this.log.info(
      held === 0
        ? 'stopped: no partition state held, nothing to checkpoint'
        : 'stopped: state checkpointed, group left',
    );
    return { clean: true, notCheckpointed };
  }

  /** Wait `ms`; a stop request cuts it short when `always` is set or the consumer never joined. */
  private pause(ms: number, always = false): Promise<void> {
    return new Promise<void>((resolve) => {
      const done = () => {
        clearTimeout(timer);
        this.stopWaiters.delete(done);
        resolve();
      };
      const timer = setTimeout(done, ms);
      if (always || !this.started) this.stopWaiters.add(done);
    });
  }

  /** The failure in words, naming the address (and the operation, for ACL refusals). */
  private describe(dependency: 'kafka' | 'redis', err: unknown, what?: string): Outage {
    return dependency === 'kafka'
      ? kafkaOutage(err, this.kafkaSettings, what)
      : redisOutage(err, this.redisSettings, this.redisWatch.lastError);
  }

  /**
   * A failed request or connection the Kafka client retries on its own (a broker that stops
   * answering mid-run): one line and one count per failure, with the broker it names. Pass the
   * client's log entries here (buildKafka's onError).
   */
  noteKafkaClientError(entry: {
    namespace: string;
    log: { message?: unknown; broker?: unknown; error?: unknown };
  }): void {
    // While a call of ours is retried, its backoff logs the one line per attempt; the client's
    // own reconnects inside that call would repeat it.
    if (this.stopping || this.kafkaRetries > 0 || entry.namespace !== 'Connection') return;
    const broker = typeof entry.log.broker === 'string' ? entry.log.broker : null;
    const settings = broker === null ? this.kafkaSettings : { ...this.kafkaSettings, brokers: [broker] };
    const outage = kafkaOutage(kafkaLogError(entry.log), settings, this.readWhat);
    // Before the first join a refusal ends start() with its own line: no "retrying" before it.
    if (!this.started && outage.refusal !== null) return;
    this.noteRetry(outage, null, 0);
  }

  /** One warn line and one count per retry. */
  private noteRetry(outage: Outage, delayMs: number | null, attempt: number): void {
    if (outage.dependency === 'kafka') this.kafkaDown = true;
    this.metrics.backoff.inc({ dependency: outage.dependency, cause: outage.cause });
    this.log.warn(
      { dependency: outage.dependency, cause: outage.cause, code: outage.refusal?.code, attempt, delayMs },
      retryLine(outage, delayMs),
    );
  }

  private wireEvents(): void {
    const ev = this.consumer.events;
    this.consumer.on(ev.GROUP_JOIN, (e) => {
      const mine = e.payload.memberAssignment[this.settings.inputTopic] ?? [];
      this.assigned = new Set(mine);
      this.joined = true;
      this.started = true;
      this.kafkaDown = false;
      this.consumerRestarts = 0;
      const now = Date.now();
      for (const partition of [...this.heardAt.keys()]) {
        if (this.assigned.has(partition)) continue;
        this.heardAt.delete(partition);
        this.metrics.inputIdle.remove({ partition: String(partition) });
      }
      for (const partition of mine) if (!this.heardAt.has(partition)) this.heardAt.set(partition, now);
      this.metrics.assignedPartitions.set(mine.length);
      this.log.info(
        { partitions: [...mine].sort((a, b) => a - b), leader: e.payload.isLeader },
        'partitions assigned',
      );
      // Partitions we held but no longer own: checkpoint (if still ours) and let go.
      void this.locked(async () => {
        for (const w of [...this.workers.values()]) {
          if (this.assigned.has(w.partition)) continue;
          if (await this.checkpoint(w)) await this.store.release(w.partition).catch(() => undefined);
          this.drop(w, 'revoked');
        }
      }).catch((err: unknown) => this.log.error({ err: errText(err) }, 'hand-over after rebalance failed'));
    });
    this.consumer.on(ev.REBALANCING, () => {
      this.joined = false;
      this.log.info('group rebalancing: checkpointing owned partitions');
      void this.locked(() => this.checkpointAll()).catch((err: unknown) =>
        this.log.warn(
          { err: errText(err) },
          'checkpoint before rebalance failed; the next owner re-reads from the last one',
        ),
      );
    });
    // A retriable failure is logged and counted by beforeRestart; a final one ends a start, or is
    // waited out with a fresh consumer once the monitor has been running.
    this.consumer.on(ev.CRASH, (e) => {
      this.joined = false;
      this.kafkaDown = true;
      if (e.payload.restart || this.stopping) return;
      const outage = this.describe('kafka', e.payload.error, this.readWhat);
      if (!this.started) {
        this.startFailure =
          outage.refusal ??
          new StreamfenceError(
            'SERVICE_UNAVAILABLE',
            `${outage.line}; the consumer could not join group ${this.settings.group}`,
          );
        return;
      }
      void this.replaceConsumer(e.payload.error);
    });
    this.consumer.on(ev.HEARTBEAT, () => {
      this.kafkaDown = false;
    });
    this.consumer.on(ev.STOP, () => {
      this.joined = false;
    });
  }

  /** Serialise partition work: each task starts when the previous one has finished. */
  private locked<T>(task: () => Promise<T>): Promise<T> {
    const run = this.lockTail.then(task, task);
    this.lockTail = run.catch(() => undefined);
    return run;
  }

  /**
   * Call a dependency until it answers, one warn line and one count per retry. Before the first
   * join a refusal (auth, TLS, ACL) is thrown at once as its StreamfenceError, and a stop request
   * ends the waiting; after it, everything is waited out (a stop gives up at its deadline).
   */
  private retry<T>(
    dependency: 'kafka' | 'redis',
    fn: () => Promise<T>,
    extra: Partial<BackoffHooks> = {},
    what?: string,
  ): Promise<T> {
    const attempt = async () => {
      try {
        const result = await fn();
        if (dependency === 'kafka') this.kafkaDown = false;
        return result;
      } catch (err) {
        const refusal = this.started
          ? null
          : (this.startRefusal(dependency, err) ?? this.describe(dependency, err, what).refusal);
        throw refusal ?? err;
      }
    };
    if (dependency === 'kafka') this.kafkaRetries++;
    return withBackoff(attempt, {
      onRetry: (n, delayMs, err) => this.noteRetry(this.describe(dependency, err, what), delayMs, n),
      final: (err) => err instanceof StreamfenceError,
      // A stop request ends the waiting: stop() then hands back whatever is safe.
      giveUp: () => this.stopping && (!this.started || Date.now() > this.stopGiveUpAt),
      sleep: (ms) => this.pause(ms),
      ...extra,
    }).finally(() => {
      if (dependency === 'kafka') this.kafkaRetries--;
    });
  }

  private async claim(partition: number, heartbeat: () => Promise<void>): Promise<PartitionWorker> {
    const cp = await this.retry('redis', () => this.store.claim(partition), { whileWaiting: heartbeat });
    const engine = new Engine(this.config, this.budget);
    let next: number;
    let rebuild: RebuildPlan | null = null;
    if (cp.offset !== null) {
      for (const bytes of cp.states.values()) engine.restore(bytes);
      next = Number(cp.offset);
    } else {
      // No offset: sensor states without one cannot be placed in the stream, so they are not used.
      if (cp.states.size > 0)
        this.log.warn({ partition, sensors: cp.states.size }, 'sensor states without an offset ignored');
      const offsets = await this.retry('kafka', () => this.admin.fetchTopicOffsets(this.settings.inputTopic));
      const p = offsets.find((o) => o.partition === partition);
      const low = Number(p?.low ?? '0');
      const high = Number(p?.high ?? '0');
      const committed = await this.committedOffset(partition);
      const plan = (cause: RebuildCause, until: number): RebuildPlan | null => {
        this.metrics.stateRebuilds.inc({ cause });
        if (until <= low)
          return cause === 'keys_lost' ? this.noHistoryLeft(partition, committed ?? low, low) : null;
        return {
          cause,
          until,
          phase: 'locate',
          low,
          wantedFromMs: 0,
          firstReadMs: null,
          fromOldest: false,
          readings: 0,
          startedAt: Date.now(),
        };
      };
      if (committed !== null) {
        // The group made progress here but Redis holds nothing: the state was lost while no
        // monitor held it (flushed, or a Redis restarted without persistence). Rebuild the
        // baselines from the history before the committed offset, then judge on from there.
        next = Math.min(Math.max(committed, low), high);
        this.log.error(
          { partition, cause: 'keys_lost', committedOffset: committed, offset: next.toString() },
          `partition state gone from Redis although group ${this.settings.group} committed offset ${committed}; rebuilding the baselines from the input topic before it (publishing nothing), then judging on from there`,
        );
        rebuild = plan('keys_lost', next);
      } else {
        // Never checkpointed: start at the end the topic had when we started (`now`), so days of
        // retained history are not judged and published again, or at the oldest message kept.
        const startFrom = this.settings.startFrom ?? 'now';
        next =
          startFrom === 'earliest'
            ? low
            : Math.min(Math.max(this.startOffsets.get(partition) ?? high, low), high);
        this.log.info(
          { partition, startFrom, offset: next.toString() },
          startFrom === 'earliest'
            ? 'no stored state: starting at the oldest message Kafka holds'
            : 'no stored state: starting at the end of the topic (readings from now on)',
        );
        if (this.settings.warmStart) {
          rebuild = plan('warm_start', next);
          this.log.info(
            { partition, cause: 'warm_start', offset: next.toString() },
            rebuild
              ? 'warm start: learning the baselines from the history before the start point (publishing nothing)'
              : 'warm start: no history before the start point; baselines start empty',
          );
        }
      }
    }
    const w: PartitionWorker = {
      partition,
      engine,
      // A rebuild first reads the message just before the resume point, for its Kafka time.
      next: rebuild ? rebuild.until - 1 : next,
      checkpointed: cp.offset === null ? -1 : next,
      dirty: new Set(),
      sinceCheckpoint: 0,
      start: 'verify',
      rebuild,
    };
    if (rebuild) this.metrics.rebuildingPartitions.inc();
    this.workers.set(partition, w);
    this.log.info(
      { partition, sensors: engine.sensorCount, offset: next.toString() },
      'partition state loaded',
    );
    return w;
  }

  /**
   * A partition's first batch: when the fetch began elsewhere than the checkpoint, seek there and
   * return true (the batch is dropped); otherwise the start is done.
   */
  private seekedToCheckpoint(w: PartitionWorker, first: number, topic: string, part: number): boolean {
    if (first !== w.next && w.start === 'verify') {
      // The fetch began elsewhere than our checkpoint (group offsets ahead of the Redis state, or
      // the oldest message on a first start from `now`): go there.
      this.log.info(
        { partition: part, from: first.toString(), to: w.next.toString() },
        'seeking to checkpoint',
      );
      this.consumer.seek({ topic, partition: part, offset: w.next.toString() });
      w.start = 'seeked';
      return true;
    }
    if (first > w.next && !w.rebuild) {
      this.log.warn(
        { partition: part, expected: w.next.toString(), got: first.toString() },
        'readings after the checkpoint are gone from Kafka (retention?); continuing from the oldest available',
      );
    }
    w.start = 'done';
    return false;
  }

  private async onBatch(p: EachBatchPayload): Promise<void> {
    const { batch, resolveOffset, heartbeat, isRunning, isStale } = p;
    if (this.stopping || batch.messages.length === 0 || isStale()) return;
    this.kafkaDown = false;
    const part = batch.partition;
    const w = this.workers.get(part) ?? (await this.claim(part, heartbeat));
    const msgs = batch.messages;
    // Debug only: when each partition's fetches arrive (the failover bench times a leader move by it).
    this.log.debug({ partition: part, first: msgs[0].offset, last: msgs[msgs.length - 1].offset }, 'batch');

    if (w.start !== 'done' && this.seekedToCheckpoint(w, Number(msgs[0].offset), batch.topic, part)) return;
    if (w.rebuild?.phase === 'locate' && (await this.locateRebuild(w, msgs, batch.topic))) return;

    const now = Date.now();
    this.heardAt.set(part, now);
    let accepted = 0;
    let rejected = 0;
    const doubtful = { uncertain: 0, bad: 0 };
    let since = 0;
    // Resolved once per slice, not per message: it only tells kafkajs where to fetch next.
    let lastOffset: string | null = null;
    // Whether to go on: asked again only after each await, since nothing else runs between them
    // (a seek, consumer stop or stop() happens in other tasks). kafkajs's isStale() builds a JSON
    // key per call: asked per message it cost about 6 % of the monitor's CPU.
    const goOn = () => isRunning() && !isStale() && !this.stopping;
    let live = goOn();
    for (const m of msgs) {
      if (!live) break;
      const off = Number(m.offset);
      lastOffset = m.offset;
      if (off < w.next) continue; // already in the checkpointed state
      const res = parseMessage(m.key, m.value);
      if (w.rebuild && off < w.rebuild.until) {
        this.relearn(w, w.rebuild, m, res.ok ? res.reading : null);
        w.next = off + 1;
        if (w.next >= w.rebuild.until) this.finishRebuild(w, w.rebuild);
        if (++since >= FLUSH_EVERY) {
          since = 0;
          resolveOffset(m.offset);
          await heartbeat();
          live = goOn();
        }
        continue;
      }
      if (!res.ok) {
        this.reject(res.reason, res.detail, m, batch.topic, part);
        rejected++;
      } else {
        const out = w.engine.process(res.reading);
        if (!out.accepted) {
          this.reject(out.reason, out.detail, m, batch.topic, part);
          rejected++;
        } else {
          accepted++;
          if (out.quality !== 'good') doubtful[out.quality]++;
          w.dirty.add(res.reading.sensor);
          // Sampled 1 in 16: the distribution, not every reading, is what the histogram is for.
          if ((accepted & 15) === 1)
            this.metrics.eventDelay.observe(Math.max(0, now - res.reading.ts) / 1000);
          for (const e of out.events) {
            // A reading can raise another sensor's alert (one gone silent): that state changed too.
            w.dirty.add(e.sensor);
            this.outbox.alerts.push({ key: e.sensor, value: JSON.stringify(e) });
            this.metrics.alerts.inc({ state: e.state, severity: e.severity });
          }
        }
      }
      w.next = off + 1;
      w.sinceCheckpoint++;
      if (++since >= FLUSH_EVERY) {
        since = 0;
        resolveOffset(m.offset);
        this.flush();
        // Backpressure: never hold more than MAX_UNSENT events unacknowledged.
        if (this.unsent > MAX_UNSENT) await this.flushed();
        await heartbeat();
        live = goOn();
      }
    }
    if (lastOffset !== null) resolveOffset(lastOffset);
    this.countReadings(accepted, rejected, doubtful);
    this.flush();
    if (this.unsent > MAX_UNSENT) await this.flushed();
    this.metrics.partitionLag.set({ partition: String(part) }, Number(batch.highWatermark) - w.next);
    if (w.sinceCheckpoint >= this.settings.checkpointReadings) await this.checkpoint(w, heartbeat);
  }

  /** A batch's readings into the metrics, once per batch: accepted by quality, and rejected. */
  private countReadings(
    accepted: number,
    rejected: number,
    doubtful: { uncertain: number; bad: number },
  ): void {
    if (accepted) {
      this.metrics.readings.inc({ outcome: 'accepted' }, accepted);
      const good = accepted - doubtful.uncertain - doubtful.bad;
      if (good) this.metrics.readingQuality.inc({ quality: 'good' }, good);
      if (doubtful.uncertain) this.metrics.readingQuality.inc({ quality: 'uncertain' }, doubtful.uncertain);
      if (doubtful.bad) this.metrics.readingQuality.inc({ quality: 'bad' }, doubtful.bad);
    }
    if (rejected) this.metrics.readings.inc({ outcome: 'rejected' }, rejected);
  }

  /**
   * The located step of a rebuild: the message before the resume point gives the Kafka time; the
   * re-read starts at the offset for that time minus historyNeeded. Returns true when the batch
   * is done with (a seek was made).
   */
  private async locateRebuild(
    w: PartitionWorker,
    msgs: EachBatchPayload['batch']['messages'],
    topic: string,
  ): Promise<boolean> {
    const plan = w.rebuild!;
    const last = msgs.find((m) => Number(m.offset) === plan.until - 1);
    if (!last) {
      // Gone since the plan (retention): nothing before the resume point is left to learn from.
      plan.phase = 'read';
      plan.firstReadMs = Number(msgs[0].timestamp);
      plan.wantedFromMs = plan.firstReadMs - historyNeeded(this.config);
      plan.fromOldest = true;
      w.next = plan.until;
      this.finishRebuild(w, plan);
      return false;
    }
    plan.wantedFromMs = Number(last.timestamp) - historyNeeded(this.config);
    const byTime = await this.retry('kafka', () =>
      this.admin.fetchTopicOffsetsByTimestamp(topic, plan.wantedFromMs),
    );
    const found = Number(byTime.find((o) => o.partition === w.partition)?.offset ?? '-1');
    // No message at or after the time (-1), or out-of-order producer timestamps: stay in range.
    const from = found < 0 ? plan.until - 1 : Math.min(Math.max(found, plan.low), plan.until - 1);
    plan.phase = 'read';
    plan.fromOldest = from === plan.low;
    this.log.info(
      {
        partition: w.partition,
        cause: plan.cause,
        fromOffset: from,
        untilOffset: plan.until,
        fromTime: new Date(plan.wantedFromMs).toISOString(),
      },
      `re-reading ${plan.until - from} messages of history to rebuild the baselines`,
    );
    if (from === w.next) return false;
    w.next = from;
    this.consumer.seek({ topic, partition: w.partition, offset: from.toString() });
    w.start = 'seeked';
    return true;
  }

  /**
   * A state loss with nothing left to learn from: retention has removed every message before the
   * resume point (and perhaps some after it). Say so and how much is missing; baselines start empty
   * (null: no rebuild plan).
   */
  private noHistoryLeft(partition: number, committed: number, low: number): null {
    const neededMs = historyNeeded(this.config);
    const unjudged = Math.max(0, low - committed);
    this.metrics.rebuildHistoryMissing.set({ partition: String(partition) }, neededMs / 1000);
    this.log.warn(
      {
        partition,
        cause: 'keys_lost',
        committedOffset: committed,
        oldestOffset: low,
        missingSeconds: neededMs / 1000,
        unjudged,
      },
      `nothing of the ${formatDuration(neededMs)} of history a rebuild wants is left in the input topic (retention)${unjudged > 0 ? `, and ${unjudged} messages after the committed offset are gone unjudged` : ''}; the baselines start empty (warm-up again)`,
    );
    return null;
  }

  /** One message of a rebuild: it feeds the baselines; its events and any reject are not published. */
  private relearn(
    w: PartitionWorker,
    plan: RebuildPlan,
    m: { timestamp: string },
    reading: Parameters<Engine['process']>[0] | null,
  ): void {
    if (plan.firstReadMs === null) plan.firstReadMs = Number(m.timestamp);
    if (reading === null) return;
    const out = w.engine.process(reading);
    if (!out.accepted) return;
    plan.readings++;
    w.dirty.add(reading.sensor);
    for (const e of out.events) w.dirty.add(e.sensor);
  }

  /** The rebuild reached the resume point: say what it read and what was missing; judge from here. */
  private finishRebuild(w: PartitionWorker, plan: RebuildPlan): void {
    w.rebuild = null;
    this.metrics.rebuildingPartitions.dec();
    this.metrics.rebuildReadings.inc(plan.readings);
    // History is missing when the re-read had to start at the oldest message kept and even that
    // one is younger than the time wanted.
    const oldest = plan.firstReadMs ?? plan.wantedFromMs;
    const missingMs = plan.fromOldest ? Math.max(0, oldest - plan.wantedFromMs) : 0;
    this.metrics.rebuildHistoryMissing.set({ partition: String(w.partition) }, missingMs / 1000);
    const fields = {
      partition: w.partition,
      cause: plan.cause,
      readings: plan.readings,
      sensors: w.engine.sensorCount,
      seconds: (Date.now() - plan.startedAt) / 1000,
      missingSeconds: Math.round(missingMs / 1000),
      offset: w.next.toString(),
    };
    if (missingMs > 0)
      this.log.warn(
        fields,
        `baselines rebuilt from ${plan.readings} readings, but ${formatDuration(Math.round(missingMs))} of the history wanted is not in the input topic (retention shorter than window + one bucket, or a younger topic); judging resumes with what was there`,
      );
    else this.log.info(fields, `baselines rebuilt from ${plan.readings} readings; judging resumes`);
  }

  private reject(
    reason: RejectReason,
    detail: string,
    m: Message & { offset: string },
    topic: string,
    part: number,
  ) {
    const rec = rejectionRecord(
      reason,
      detail,
      { key: (m.key as Buffer | null) ?? null, value: (m.value as Buffer | null) ?? null, offset: m.offset },
      topic,
      part,
    );
    const key = m.key ?? null;
    // A reject without key goes with its input partition's other keyless rejects, in their order.
    const partition = key === null ? part % this.partitionsOf(this.settings.rejectedTopic) : undefined;
    this.outbox.rejects.push({ key, value: JSON.stringify(rec), partition });
    this.metrics.rejected.inc({ reason });
  }

  /**
   * Start publishing everything waiting, without waiting for the acknowledgement: one request per
   * topic partition (see partition-sends.ts: a request spanning brokers can lose a partition's
   * messages in a leader change), the partitions concurrently, each retried on its own. Flushes
   * are chained, so each partition's messages go out in the order the readings were judged, and a
   * batch does not stall on a round trip. `flushed()` waits for all of them (retrying while Kafka
   * is down); every checkpoint calls it first, so no checkpoint ever covers an unsent event.
   */
  private flush(): void {
    const { alerts, rejects } = this.outbox;
    if (alerts.length === 0 && rejects.length === 0) return;
    const { alertTopic, rejectedTopic } = this.settings;
    const sends = [
      ...(alerts.length ? partitionSends(alertTopic, this.partitionsOf(alertTopic), alerts) : []),
      ...(rejects.length ? partitionSends(rejectedTopic, this.partitionsOf(rejectedTopic), rejects) : []),
    ];
    this.outbox.alerts = [];
    this.outbox.rejects = [];
    this.unsent += alerts.length + rejects.length;
    this.sending = this.sending.then(async () => {
      await Promise.all(
        sends.map(async ({ topic, messages }) => {
          // Under the broker's request size limit, one after another so the partition's order holds.
          for (const chunk of requestChunks(messages)) {
            await this.retry('kafka', () => this.producer.send({ topic, acks: -1, messages: chunk }));
            this.unsent -= chunk.length;
          }
        }),
      );
    });
    // A failed chain stays failed (flushed() rethrows); keep the rejection observed meanwhile.
    this.sending.catch(() => undefined);
  }

  /** Publish everything waiting and wait until Kafka has acknowledged it all. */
  private async flushed(): Promise<void> {
    this.flush();
    await this.sending;
  }

  private async checkpointDue(): Promise<void> {
    for (const w of [...this.workers.values()]) {
      if (w.next !== w.checkpointed || w.dirty.size > 0) await this.checkpoint(w);
    }
  }

  private async checkpointAll(): Promise<void> {
    for (const w of [...this.workers.values()]) await this.checkpoint(w);
  }

  /**
   * Write the partition's dirty sensors and offset. Returns false when the partition now belongs
   * to another monitor (its copy here is dropped and reloaded if the partition comes back).
   */
  private async checkpoint(w: PartitionWorker, heartbeat?: () => Promise<void>): Promise<boolean> {
    if (this.workers.get(w.partition) !== w) return false;
    if (w.next === w.checkpointed && w.dirty.size === 0) return true;
    // Mid-rebuild the state is not one to resume from (judging has not caught up): write nothing;
    // a restart finds the same loss and rebuilds again.
    if (w.rebuild) return true;
    await this.flushed();
    // Idle sensors leave memory now and Redis with this save (their baselines are empty anyway).
    // (A sensor evicted and seen again since is held anew: its new state is written, not deleted.)
    w.engine.evictIdle();
    const evicted = w.engine.takeEvicted().filter((sensor) => w.engine.get(sensor) === undefined);
    const entries: [string, Uint8Array][] = [];
    for (const sensor of w.dirty) {
      const bytes = w.engine.encode(sensor);
      if (bytes) entries.push([sensor, bytes]);
    }
    const offset = w.next;
    const expected: ExpectedOffset =
      w.checkpointed < 0 ? { kind: 'none' } : { kind: 'offset', offset: w.checkpointed.toString() };
    const end = this.metrics.checkpointDuration.startTimer();
    let result = await this.retry(
      'redis',
      () => this.store.save(w.partition, offset.toString(), expected, entries, evicted),
      { whileWaiting: heartbeat },
    );
    if (result === 'owner_gone' || result === 'rolled_back') {
      // Redis lost the partition's keys (flush, restart without persistence) or went back to an
      // older checkpoint (a restart that lost the append-only file's last second, a replica
      // promoted before it had our last writes). The memory state is exact: keep it and write all
      // of it, rather than dropping it or writing only what changed since.
      const cause = result === 'owner_gone' ? 'keys_lost_running' : 'checkpoint_rolled_back';
      this.metrics.checkpoints.inc({ result });
      this.metrics.stateRebuilds.inc({ cause });
      this.log.error(
        { partition: w.partition, sensors: w.engine.sensorCount, cause, expectedOffset: w.checkpointed },
        result === 'owner_gone'
          ? 'partition state gone from Redis; keeping the exact state in memory and writing it in full again'
          : 'partition state in Redis went back to an older checkpoint; keeping the exact state in memory and writing it in full again',
      );
      const retaken =
        result === 'rolled_back' ||
        (await this.retry('redis', () => this.store.retake(w.partition), { whileWaiting: heartbeat }));
      if (retaken) {
        const all: [string, Uint8Array][] = [];
        for (const sensor of w.engine.sensors()) all.push([sensor, w.engine.encode(sensor)!]);
        result = await this.retry(
          'redis',
          () => this.store.save(w.partition, offset.toString(), { kind: 'replace' }, all, []),
          { whileWaiting: heartbeat },
        );
      } else result = 'fenced';
    }
    end();
    if (result !== 'written') {
      this.metrics.checkpoints.inc({ result: 'fenced' });
      this.log.warn({ partition: w.partition }, 'partition now owned by another monitor; dropping our copy');
      this.drop(w, 'fenced');
      return false;
    }
    this.metrics.checkpoints.inc({ result: 'written' });
    if (evicted.length) {
      this.metrics.sensorsEvicted.inc(evicted.length);
      this.log.info(
        { partition: w.partition, evicted: evicted.length },
        'evicted sensors without a reading for longer than their window',
      );
    }
    w.dirty.clear();
    w.checkpointed = offset;
    w.sinceCheckpoint = 0;
    this.log.debug(
      { partition: w.partition, offset: offset.toString(), sensors: entries.length },
      'checkpoint',
    );
    // A hint only (the Redis offset is the truth), sent off the lock: see commit-hints.ts.
    this.commits.note(w.partition, offset.toString());
    return true;
  }

  private drop(w: PartitionWorker, why: string): void {
    this.workers.delete(w.partition);
    this.commits.forget(w.partition);
    if (w.rebuild) {
      this.metrics.rebuildingPartitions.dec();
      w.rebuild = null;
    }
    w.engine.releaseAll();
    this.metrics.partitionLag.remove({ partition: String(w.partition) });
    this.log.info({ partition: w.partition, why }, 'partition released');
  }

  private updateGauges(): void {
    let sensors = 0;
    let active = 0;
    for (const w of this.workers.values()) {
      sensors += w.engine.sensorCount;
      active += w.engine.activeAlertCount();
    }
    this.metrics.sensorsTracked.set(sensors);
    this.metrics.sensorLimitUsed.set(this.budget.used / this.budget.limit);
    this.metrics.activeAlerts.set(active);
    const now = Date.now();
    for (const [partition, heard] of this.heardAt)
      this.metrics.inputIdle.set({ partition: String(partition) }, Math.max(0, now - heard) / 1000);
  }

  /** For tests and the bench: the partitions this monitor holds a worker (an engine) for. */
  get partitions(): number[] {
    return [...this.workers.keys()];
  }
}

function errText(e: unknown): string {
  return e instanceof Error ? e.message : String(e);
}

function withTimeout<T>(p: Promise<T>, ms: number): Promise<T> {
  return new Promise<T>((resolve, reject) => {
    const t = setTimeout(() => reject(new Error(`timed out after ${ms} ms`)), ms);
    p.then(
      (v) => {
        clearTimeout(t);
        resolve(v);
      },
      (e: unknown) => {
        clearTimeout(t);
        reject(e as Error);
      },
    );
  });
}
