/**
 * Follow Kafka topics as a viewer: every board and terminal view reads the whole topic (from the
 * start of retention, or from a --since time) with a consumer group of its own that never commits,
 * so viewers never share or move each other's position and never touch the monitor's group.
 * With `untilEnd`, it stops once it has read up to the end offsets seen at start.
 */
import { randomBytes } from 'node:crypto';
import type { Consumer, Kafka } from 'kafkajs';
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
const pk = (t: string, p: number): PartKey => `${t}\u0000${p}`;

export async function follow(o: FollowOptions): Promise<Follower> {
  const admin = o.kafka.admin();
  await admin.connect().catch((e: unknown) => {
    throw new StreamfenceError(
      'SERVICE_UNAVAILABLE',
      `cannot reach Kafka: ${(e as Error).message}; check --brokers`,
      { cause: e },
    );
  });
  const start = new Map<PartKey, bigint>();
  const end = new Map<PartKey, bigint>();
  try {
    const existing = new Set(await admin.listTopics());
    for (const t of o.topics) {
      if (!existing.has(t)) {
        // A topic the ACL hides is missing from the list too; asking for it by name tells the two
        // apart (TOPIC_AUTHORIZATION_FAILED is thrown for the caller's refusal line).
        await admin.fetchTopicMetadata({ topics: [t] }).catch((e: unknown) => {
          if ((e as { type?: string }).type === 'TOPIC_AUTHORIZATION_FAILED') throw e;
        });
        throw new StreamfenceError(
          'NOT_FOUND',
          `Kafka topic "${t}" does not exist; check the topic name or create it first`,
        );
      }
      const offs = await admin.fetchTopicOffsets(t);
      for (const p of offs) {
        start.set(pk(t, p.partition), BigInt(p.low));
        end.set(pk(t, p.partition), BigInt(p.high));
      }
      if (o.sinceMs !== undefined && o.sinceMs !== null) {
        for (const p of await admin.fetchTopicOffsetsByTimestamp(t, o.sinceMs)) {
          // -1 means no message at or after the time: start at the end.
          const off = BigInt(p.offset) < 0n ? end.get(pk(t, p.partition))! : BigInt(p.offset);
          start.set(pk(t, p.partition), off);
        }
      }
      for (const p of offs) {
        const key = pk(t, p.partition);
        const next = o.resumeAt?.(t, p.partition);
        if (next === undefined || next <= start.get(key)!) continue;
        // Past the end only if the topic was made again: then read it from its start.
        if (next <= end.get(key)!) start.set(key, next);
      }
    }
  } finally {
    await admin.disconnect();
  }

  const remaining = new Set<PartKey>();
  for (const [k, e] of end) if (e > start.get(k)!) remaining.add(k);
  let caughtUp = false;
  const markCaughtUp = () => {
    if (caughtUp) return;
    caughtUp = true;
    o.onCaughtUp?.();
  };

  let finish!: () => void;
  let fail!: (err: unknown) => void;
  const done = new Promise<void>((resolve, reject) => {
    finish = resolve;
    fail = reject;
  });
  // Marks the rejection handled: a caller that never awaits `done` must not crash the process.
  done.catch(() => {});
  if (remaining.size === 0) markCaughtUp();
  if (o.untilEnd && remaining.size === 0) {
    finish();
    return { done, stop: async () => {} };
  }

  const consumer: Consumer = o.kafka.consumer({
    groupId: `streamfence-${o.role}-view-${randomBytes(6).toString('hex')}`,
    // Viewers read everything; a short session keeps an abandoned viewer's group from lingering.
    sessionTimeout: 10_000,
    heartbeatInterval: 3_000,
    ...(o.maxWaitMs === undefined ? {} : { maxWaitTimeInMs: o.maxWaitMs }),
  });
  let stopped = false;
  const stop = async () => {
    if (stopped) return;
    stopped = true;
    await consumer.disconnect().catch(() => {});
    finish();
  };
  // kafkajs gives up on errors no retry can cure (a denied group or topic ACL) with a CRASH event
  // that does not restart; without watching for it a follower would wait for ever.
  let joinedOk!: () => void;
  let joinFailed!: (err: unknown) => void;
  const joined = new Promise<void>((resolve, reject) => {
    joinedOk = resolve;
    joinFailed = reject;
  });
  joined.catch(() => {});
  consumer.on(consumer.events.GROUP_JOIN, () => joinedOk());
  consumer.on(consumer.events.CRASH, (e) => {
    if (e.payload.restart) {
      // kafkajs restarts the consumer itself after its own wait (a broker gone, a timeout).
      if (!stopped) o.onRestart?.(e.payload.error);
      return;
    }
    joinFailed(e.payload.error);
    stopped = true;
    void consumer.disconnect().catch(() => {});
    fail(e.payload.error);
  });
  try {
    await consumer.connect();
    for (const t of o.topics) await consumer.subscribe({ topic: t, fromBeginning: true });
    await consumer.run({
      autoCommit: false,
      eachMessage: async ({ topic, partition, message }) => {
        const k = pk(topic, partition);
        const off = BigInt(message.offset);
        if (off < (start.get(k) ?? 0n)) return; // before --since (a fetch that raced the seek)
        if (!stopped) {
          await o.onMessage({
            topic,
            partition,
            offset: message.offset,
            key: message.key,
            value: message.value,
            timestamp: Number(message.timestamp),
          });
        }
        if (remaining.has(k) && off + 1n >= end.get(k)!) {
          remaining.delete(k);
          if (remaining.size === 0) {
            markCaughtUp();
            if (o.untilEnd) setImmediate(() => void stop());
          }
        }
      },
    });
    for (const [k, off] of start) {
      const [topic, p] = k.split('\u0000');
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
