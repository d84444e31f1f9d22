/**
 * Follow Kafka topics as a viewer: every board and terminal view reads the whole topic (from the
 * start of retention, or from a --since time) with a consumer group of its own that never commits,
 * so viewers never share or move each other's position and never touch the monitor's group.
 * With `untilEnd`, it stops once it has read up to the end offsets seen at start.
 */
import { randomBytes } from 'node:crypto';
import type { Admin, Consumer, Kafka } from 'kafkajs';
import { StreamfenceError } from '../../libs/errors/index.js';

export interface FollowMessage {
  topic: string;
  partition: number;
  offset: string;
  key: Buffer | null;
  value: Buffer | null;
  /** Broker timestamp, epoch ms. */
  timestamp: number;
}

export interface FollowOptions {
  kafka: Kafka;
  topics: string[];
  /** Start at the first message at or after this time (epoch ms); default: the start of retention. */
  sinceMs?: number | null;
  /** Stop after the messages present at start have been read (no following). */
  untilEnd?: boolean;
  onMessage: (m: FollowMessage) => void | Promise<void>;
  /** Called once every message present at start has been read (at once when there were none). */
  onCaughtUp?: () => void;
  /** Longest a fetch waits on the broker for new messages (ms); also bounds how long stop() takes. */
  maxWaitMs?: number;
  /** Name shown in the viewer's group id, e.g. "board" or "alerts". */
  role: string;
  /**
   * The next offset to read per partition, for a follower that replaces one that failed: it goes on
   * where that one stopped instead of reading the topics again (never before the start of retention).
   */
  resumeAt?: (topic: string, partition: number) => bigint | undefined;
  /** Called when the consumer failed and kafkajs restarts it on its own (an outage that may end). */
  onRestart?: (err: unknown) => void;
  /**
   * Called after each fetch the brokers answered: the follower really reads (a group joined with a
   * topic ACL taken away fails at its first fetch instead).
   */
  onFetched?: () => void;
}

export interface Follower {
  /**
   * Resolves when the follower stops (untilEnd reached, or stop() called); rejects when the
   * consumer gave up on an error it cannot retry (e.g. the ACL denies reading a topic).
   */
  done: Promise<void>;
  stop(): Promise<void>;
}

type PartKey = string;
const partKey = (t: string, p: number): PartKey => `${t}\u0000${p}`;

/** Where a follower starts and what "caught up" means: per partition, the first and the end offset. */
interface ReadRange {
  start: Map<PartKey, bigint>;
  end: Map<PartKey, bigint>;
}

/** The read range of every topic followed; a missing or hidden topic is a one-line error. */
async function readRange(options: FollowOptions): Promise<ReadRange> {
  const admin = options.kafka.admin();
  await admin.connect().catch((e: unknown) => {
    throw new StreamfenceError(
      'SERVICE_UNAVAILABLE',
      `cannot reach Kafka: ${(e as Error).message}; check --brokers`,
      { cause: e },
    );
  });
  const range: ReadRange = { start: new Map(), end: new Map() };
  try {
    const existing = new Set(await admin.listTopics());
    for (const topic of options.topics) {
      if (!existing.has(topic)) await refuseMissingTopic(admin, topic);
      await addTopicRange(admin, topic, options, range);
    }
  } finally {
    await admin.disconnect();
  }
  return range;
}

async function refuseMissingTopic(admin: Admin, topic: string): Promise<never> {
  // A topic the ACL hides is missing from the list too; asking for it by name tells the two
  // apart (TOPIC_AUTHORIZATION_FAILED is thrown for the caller's refusal line).
  await admin.fetchTopicMetadata({ topics: [topic] }).catch((e: unknown) => {
    if ((e as { type?: string }).type === 'TOPIC_AUTHORIZATION_FAILED') throw e;
  });
  throw new StreamfenceError(
    'NOT_FOUND',
    `Kafka topic "${topic}" does not exist; check the topic name or create it first`,
  );
}

/** One topic's partitions into `range`: from retention's start, --since, or where a follower stopped. */
async function addTopicRange(
  admin: Admin,
  topic: string,
  options: FollowOptions,
  range: ReadRange,
): Promise<void> {
  const { start, end } = range;
  const offsets = await admin.fetchTopicOffsets(topic);
  for (const part of offsets) {
    start.set(partKey(topic, part.partition), BigInt(part.low));
    end.set(partKey(topic, part.partition), BigInt(part.high));
  }
  if (options.sinceMs !== undefined && options.sinceMs !== null) {
    for (const part of await admin.fetchTopicOffsetsByTimestamp(topic, options.sinceMs)) {
      // -1 means no message at or after the time: start at the end.
      const off = BigInt(part.offset) < 0n ? end.get(partKey(topic, part.partition))! : BigInt(part.offset);
      start.set(partKey(topic, part.partition), off);
    }
  }
  for (const part of offsets) {
    const key = partKey(topic, part.partition);
    const next = options.resumeAt?.(topic, part.partition);
    if (next === undefined || next <= start.get(key)!) continue;
    // Past the end only if the topic was made again: then read it from its start.
    if (next <= end.get(key)!) start.set(key, next);
  }
}

/** A promise with its settle functions; its rejection is marked handled. */
function settleable(): { promise: Promise<void>; resolve: () => void; reject: (err: unknown) => void } {
  let resolve!: () => void;
  let reject!: (err: unknown) => void;
  const promise = new Promise<void>((ok, fail) => {
    resolve = ok;
    reject = fail;
  });
  promise.catch(() => {});
  return { promise, resolve, reject };
}

/** A consumer in a group of its own (never committed), so viewers never move each other's position. */
function viewerConsumer(options: FollowOptions): Consumer {
  return options.kafka.consumer({
    groupId: `streamfence-${options.role}-view-${randomBytes(6).toString('hex')}`,
    // Viewers read everything; a short session keeps an abandoned viewer's group from lingering.
    sessionTimeout: 10_000,
    heartbeatInterval: 3_000,
    ...(options.maxWaitMs === undefined ? {} : { maxWaitTimeInMs: options.maxWaitMs }),
  });
}

/**
 * Follow `topics` as a viewer (see the module comment); resolves once the consumer joined its group,
 * rejects with a one-line error when Kafka cannot be reached, a topic is missing or an ACL denies it.
 */
export async function follow(options: FollowOptions): Promise<Follower> {
  const { start, end } = await readRange(options);

  const remaining = new Set<PartKey>();
  for (const [key, endOffset] of end) if (endOffset > start.get(key)!) remaining.add(key);
  let caughtUp = false;
  const markCaughtUp = () => {
    if (caughtUp) return;
    caughtUp = true;
    options.onCaughtUp?.();
  };

  // Its rejection is marked handled: a caller that never awaits `done` must not crash the process.
  const { promise: done, resolve: finish, reject: fail } = settleable();
  if (remaining.size === 0) markCaughtUp();
  if (options.untilEnd && remaining.size === 0) {
    finish();
    return { done, stop: async () => {} };
  }

  const consumer = viewerConsumer(options);
  let stopped = false;
  const stop = async () => {
    if (stopped) return;
    stopped = true;
    await consumer.disconnect().catch(() => {});
    finish();
  };
  // kafkajs gives up on errors no retry can cure (a denied group or topic ACL) with a CRASH event
  // that does not restart; without watching for it a follower would wait for ever.
  const { promise: joined, resolve: joinedOk, reject: joinFailed } = settleable();
  consumer.on(consumer.events.GROUP_JOIN, () => joinedOk());
  consumer.on(consumer.events.FETCH, () => {
    if (!stopped) options.onFetched?.();
  });
  consumer.on(consumer.events.CRASH, (e) => {
    if (e.payload.restart) {
      // kafkajs restarts the consumer itself after its own wait (a broker gone, a timeout).
      if (!stopped) options.onRestart?.(e.payload.error);
      return;
    }
    joinFailed(e.payload.error);
    stopped = true;
    void consumer.disconnect().catch(() => {});
    fail(e.payload.error);
  });
  try {
    await consumer.connect();
    for (const t of options.topics) await consumer.subscribe({ topic: t, fromBeginning: true });
    await consumer.run({
      autoCommit: false,
      eachMessage: async ({ topic, partition, message }) => {
        const key = partKey(topic, partition);
        const offset = BigInt(message.offset);
        if (offset < (start.get(key) ?? 0n)) return; // before --since (a fetch that raced the seek)
        if (!stopped) {
          await options.onMessage({
            topic,
            partition,
            offset: message.offset,
            key: message.key,
            value: message.value,
            timestamp: Number(message.timestamp),
          });
        }
        if (remaining.has(key) && offset + 1n >= end.get(key)!) {
          remaining.delete(key);
          if (remaining.size === 0) {
            markCaughtUp();
            if (options.untilEnd) setImmediate(() => void stop());
          }
        }
      },
    });
    for (const [key, off] of start) {
      const [topic, p] = key.split('\u0000');
      if (off > 0n) consumer.seek({ topic, partition: Number(p), offset: off.toString() });
    }
  } catch (err) {
    // A follower that never started leaves no consumer behind (a board retries every few seconds).
    stopped = true;
    await consumer.disconnect().catch(() => {});
    throw err;
  }
  // Started means joined: a group the ACL denies fails here, before the caller reports success.
  await joined;
  return { done, stop };
}
