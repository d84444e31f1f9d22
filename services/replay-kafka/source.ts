/**
 * Replay source for a time range of a Kafka topic: yields the messages whose Kafka timestamp lies
 * in [from, to) as replay input records, read from every partition, without committing anything.
 *
 * Safe against production topics: offsets are never committed (autoCommit off, no commit call),
 * so no consumer group's position changes. kafkajs can only consume through a group, so the
 * source joins a throwaway group named `streamfence-replay-<uuid>` that no one else uses, and
 * deletes it when it finishes (`stats.groupDeleted` says whether that worked; an empty group
 * with no offsets also expires on its own under the broker's offsets retention).
 *
 * Range: per partition, from the first offset whose timestamp is >= from up to (not including)
 * the first offset whose timestamp is >= to, both looked up in the broker's timestamp index;
 * messages in that offset span whose own timestamp is outside [from, to) are skipped (producers
 * may set out-of-order timestamps) and counted in `stats.outsideRange`.
 *
 * Order: a k-way merge of the partitions, each kept in offset order, always taking the head with
 * the smallest key (reading ts, or the message timestamp when the payload is not a valid
 * reading; ties by partition, then offset). When each partition's readings are in time order the
 * output is therefore "ordered by reading ts, ties by partition then offset", and is the same on
 * every run. The merge waits until every unfinished partition has a message buffered, so fetch
 * timing never changes the order. Each partition buffers at most `maxBufferedPerPartition`
 * messages (it is paused beyond that), so memory does not grow with the range.
 */
import { randomUUID } from 'node:crypto';
import type { Admin, Consumer } from 'kafkajs';
import { parseJsonReading, type ParseResult } from '../../libs/engine/reading.js';
import { StreamfenceError } from '../../libs/errors/index.js';
import type { InputRecord } from '../replay/input.js';
import { buildKafka, kafkaFailure, type KafkaSettings } from '../connect/index.js';

export interface KafkaRangeStats {
  /** Partitions of the topic, and how many had messages in the offset span. */
  partitions: number;
  partitionsInRange: number;
  /** Messages yielded as records. */
  messages: number;
  /** Messages inside the offset span but with a timestamp outside [from, to). */
  outsideRange: number;
  groupId: string | null;
  groupDeleted: boolean;
}

export interface KafkaRangeOptions {
  /** Brokers, TLS and SASL (services/connect/). */
  connection: KafkaSettings;
  topic: string;
  /** Inclusive start, epoch ms (Kafka message timestamp). */
  from: number;
  /** Exclusive end, epoch ms. */
  to: number;
  /** Records per yielded batch (default 4096). */
  batchSize?: number;
  /** Messages buffered per partition before it is paused (default 10 000). */
  maxBufferedPerPartition?: number;
  /** Give up when no message arrives for this long while some are still expected (default 30 s). */
  idleTimeoutMs?: number;
  /** Filled in while the source runs. */
  stats?: KafkaRangeStats;
}

export function newKafkaRangeStats(): KafkaRangeStats {
  return {
    partitions: 0,
    partitionsInRange: 0,
    messages: 0,
    outsideRange: 0,
    groupId: null,
    groupDeleted: false,
  };
}

/** One buffered message of a partition, with its merge key (reading ts, else message timestamp). */
interface BufferedMessage {
  offset: number;
  key: number;
  raw: string;
  result: ParseResult;
}

/** One partition's offset span [start, end) and its buffer of messages not yet merged. */
interface PartitionRange {
  partition: number;
  start: number;
  end: number;
  /** Next offset to accept (messages below it are duplicates after a seek). */
  next: number;
  buffer: BufferedMessage[];
  head: number;
  done: boolean;
  paused: boolean;
}

interface Limits {
  batchSize: number;
  maxBuffered: number;
  idleMs: number;
}

const byMergeOrder = (left: PartitionRange, right: PartitionRange): number => {
  const leftHead = left.buffer[left.head];
  const rightHead = right.buffer[right.head];
  return (
    leftHead.key - rightHead.key || left.partition - right.partition || leftHead.offset - rightHead.offset
  );
};

/**
 * Wakes the merge when a partition has buffered messages or the consumer crashed. One waiter at
 * a time (the merge); a notify with no waiter is dropped because the merge checks the buffers
 * before it waits.
 */
class Wakeup {
  failure: unknown = null;
  private waiter: (() => void) | null = null;

  notify(): void {
    const waiter = this.waiter;
    this.waiter = null;
    waiter?.();
  }

  fail(err: unknown): void {
    this.failure = err;
    this.notify();
  }

  /** True when woken, false when `ms` passed first. */
  wait(ms: number): Promise<boolean> {
    return new Promise<boolean>((resolve) => {
      const timer = setTimeout(() => resolve(false), ms);
      this.waiter = () => {
        clearTimeout(timer);
        resolve(true);
      };
    });
  }
}

/**
 * Read the messages of `opts.topic` with a Kafka timestamp in [from, to), merged across
 * partitions as the header describes, in batches of records numbered from 1.
 */
export async function* kafkaRangeSource(opts: KafkaRangeOptions): AsyncGenerator<InputRecord[]> {
  const { from, to } = opts;
  if (!Number.isFinite(from) || !Number.isFinite(to) || from >= to) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `the Kafka time range must have from < to (got ${from} and ${to}); give the start before the end`,
    );
  }
  const stats = opts.stats ?? newKafkaRangeStats();
  const limits: Limits = {
    batchSize: opts.batchSize ?? 4096,
    maxBuffered: opts.maxBufferedPerPartition ?? 10_000,
    idleMs: opts.idleTimeoutMs ?? 30_000,
  };
  const kafka = buildKafka(opts.connection, { clientId: 'streamfence-replay' });
  const admin = kafka.admin();
  let consumer: Consumer | null = null;
  try {
    const ranges = await partitionRanges(admin, opts, stats);
    if (ranges.length === 0) return;
    const wakeup = new Wakeup();
    const groupId = `streamfence-replay-${randomUUID()}`;
    stats.groupId = groupId;
    consumer = kafka.consumer({ groupId, allowAutoTopicCreation: false, retry: { retries: 5 } });
    await fillBuffers(consumer, ranges, opts, stats, wakeup, limits.maxBuffered);
    yield* mergePartitions(consumer, ranges, opts, stats, wakeup, limits);
  } finally {
    if (consumer !== null) {
      await consumer.disconnect().catch(() => undefined);
      try {
        await admin.deleteGroups([stats.groupId!]);
        stats.groupDeleted = true;
      } catch {
        stats.groupDeleted = false;
      }
    }
    await admin.disconnect().catch(() => undefined);
  }
}

/** The partitions with messages in the time range, by partition number (the topic must exist). */
async function partitionRanges(
  admin: Admin,
  opts: KafkaRangeOptions,
  stats: KafkaRangeStats,
): Promise<PartitionRange[]> {
  const { topic } = opts;
  try {
    await admin.connect();
  } catch (err) {
    throw kafkaFailure(err, opts.connection, `read topic ${topic}`);
  }
  const topics = await admin.listTopics();
  if (!topics.includes(topic)) {
    throw new StreamfenceError(
      'NOT_FOUND',
      `kafka ${opts.connection.brokers.join(',')}: topic "${topic}" does not exist; check the topic name or create it first`,
    );
  }
  const starts = await admin.fetchTopicOffsetsByTimestamp(topic, opts.from);
  const ends = await admin.fetchTopicOffsetsByTimestamp(topic, opts.to);
  stats.partitions = starts.length;
  const ranges: PartitionRange[] = [];
  for (const startOffset of starts) {
    const end = Number(ends.find((endOffset) => endOffset.partition === startOffset.partition)!.offset);
    const start = Number(startOffset.offset);
    if (start < end)
      ranges.push({
        partition: startOffset.partition,
        start,
        end,
        next: start,
        buffer: [],
        head: 0,
        done: false,
        paused: false,
      });
  }
  ranges.sort((left, right) => left.partition - right.partition);
  stats.partitionsInRange = ranges.length;
  return ranges;
}

/**
 * Start the consumer: each partition is sought to its range start and its messages buffered
 * until its range end; a partition is paused while `maxBuffered` messages wait, and when done.
 */
async function fillBuffers(
  consumer: Consumer,
  ranges: PartitionRange[],
  opts: KafkaRangeOptions,
  stats: KafkaRangeStats,
  wakeup: Wakeup,
  maxBuffered: number,
): Promise<void> {
  const { topic, from, to } = opts;
  const byPartition = new Map(ranges.map((range) => [range.partition, range]));
  consumer.on(consumer.events.CRASH, (event) => wakeup.fail(event.payload.error));
  await consumer.connect();
  // Starting at "latest" means nothing is fetched before the seeks below take effect.
  await consumer.subscribe({ topic, fromBeginning: false });
  await consumer.run({
    autoCommit: false,
    eachBatch: async ({ batch, heartbeat }) => {
      const range = byPartition.get(batch.partition);
      if (range === undefined || range.done) return;
      for (const message of batch.messages) {
        const offset = Number(message.offset);
        if (offset < range.next || offset >= range.end) continue;
        range.next = offset + 1;
        const ts = Number(message.timestamp);
        if (ts < from || ts >= to) stats.outsideRange++;
        else {
          const raw = message.value === null ? '' : message.value.toString('utf8');
          const result = parseJsonReading(raw);
          range.buffer.push({ offset, key: result.ok ? result.reading.ts : ts, raw, result });
        }
        if (offset >= range.end - 1) {
          range.done = true;
          break;
        }
      }
      if (range.done || range.buffer.length - range.head >= maxBuffered) {
        range.paused = true;
        consumer.pause([{ topic, partitions: [range.partition] }]);
      }
      wakeup.notify();
      await heartbeat();
    },
  });
  for (const range of ranges)
    consumer.seek({ topic, partition: range.partition, offset: String(range.start) });
}

/**
 * The k-way merge: whenever every unfinished partition has a message buffered, take the smallest
 * head; otherwise hand out what is gathered, or wait (at most `idleMs`) for the consumer.
 */
async function* mergePartitions(
  consumer: Consumer,
  ranges: PartitionRange[],
  opts: KafkaRangeOptions,
  stats: KafkaRangeStats,
  wakeup: Wakeup,
  limits: Limits,
): AsyncGenerator<InputRecord[]> {
  const { topic } = opts;
  const ready = (): boolean => ranges.every((range) => range.head < range.buffer.length || range.done);
  let line = 0;
  let out: InputRecord[] = [];
  for (;;) {
    if (!ready()) {
      if (out.length > 0) {
        yield out;
        out = [];
        continue;
      }
      if (wakeup.failure !== null) throw readFailure(opts, wakeup.failure);
      const woken = await wakeup.wait(limits.idleMs);
      if (wakeup.failure !== null) throw readFailure(opts, wakeup.failure);
      if (!woken && !ready()) {
        throw new StreamfenceError(
          'SERVICE_UNAVAILABLE',
          `no message from Kafka topic "${topic}" for ${limits.idleMs / 1000} s while the time range was still being read; check that the brokers are healthy and retry`,
        );
      }
      continue;
    }
    // Every unfinished partition has a head: take the smallest.
    let best: PartitionRange | null = null;
    for (const range of ranges)
      if (range.head < range.buffer.length && (best === null || byMergeOrder(range, best) < 0)) best = range;
    if (best === null) break; // all done and drained
    const message = best.buffer[best.head++];
    if (best.head === best.buffer.length) {
      best.buffer = [];
      best.head = 0;
    }
    if (best.paused && !best.done && best.buffer.length - best.head < limits.maxBuffered / 2) {
      best.paused = false;
      consumer.resume([{ topic, partitions: [best.partition] }]);
    }
    line++;
    stats.messages++;
    out.push({ line, raw: message.raw, result: message.result, partition: best.partition });
    if (out.length >= limits.batchSize) {
      yield out;
      out = [];
    }
  }
  if (out.length > 0) yield out;
}

function readFailure(opts: KafkaRangeOptions, err: unknown): StreamfenceError {
  return kafkaFailure(err, opts.connection, `read topic ${opts.topic}`);
}
