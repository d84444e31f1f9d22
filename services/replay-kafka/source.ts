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
import type { Consumer } from 'kafkajs';
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

interface Msg {
  offset: number;
  key: number;
  raw: string;
  result: ParseResult;
}

interface PartitionRange {
  partition: number;
  start: number;
  end: number;
  /** Next offset to accept (messages below it are duplicates after a seek). */
  next: number;
  buf: Msg[];
  head: number;
  done: boolean;
  paused: boolean;
}

const cmp = (a: PartitionRange, b: PartitionRange): number => {
  const ma = a.buf[a.head];
  const mb = b.buf[b.head];
  return ma.key - mb.key || a.partition - b.partition || ma.offset - mb.offset;
};

export async function* kafkaRangeSource(opts: KafkaRangeOptions): AsyncGenerator<InputRecord[]> {
  const { topic, from, to } = opts;
  if (!Number.isFinite(from) || !Number.isFinite(to) || from >= to) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `the Kafka time range must have from < to (got ${from} and ${to}); give the start before the end`,
    );
  }
  const stats = opts.stats ?? newKafkaRangeStats();
  const batchSize = opts.batchSize ?? 4096;
  const maxBuf = opts.maxBufferedPerPartition ?? 10_000;
  const idleMs = opts.idleTimeoutMs ?? 30_000;
  const brokers = opts.connection.brokers;
  const kafka = buildKafka(opts.connection, { clientId: 'streamfence-replay' });
  const admin = kafka.admin();
  let consumer: Consumer | null = null;
  try {
    try {
      await admin.connect();
    } catch (err) {
      throw kafkaFailure(err, opts.connection, `read topic ${topic}`);
    }
    const topics = await admin.listTopics();
    if (!topics.includes(topic)) {
      throw new StreamfenceError(
        'NOT_FOUND',
        `kafka ${brokers.join(',')}: topic "${topic}" does not exist; check the topic name or create it first`,
      );
    }
    const starts = await admin.fetchTopicOffsetsByTimestamp(topic, from);
    const ends = await admin.fetchTopicOffsetsByTimestamp(topic, to);
    stats.partitions = starts.length;
    const ranges: PartitionRange[] = [];
    for (const s of starts) {
      const end = Number(ends.find((e) => e.partition === s.partition)!.offset);
      const start = Number(s.offset);
      if (start < end)
        ranges.push({
          partition: s.partition,
          start,
          end,
          next: start,
          buf: [],
          head: 0,
          done: false,
          paused: false,
        });
    }
    ranges.sort((a, b) => a.partition - b.partition);
    stats.partitionsInRange = ranges.length;
    if (ranges.length === 0) return;

    const byPartition = new Map(ranges.map((r) => [r.partition, r]));
    let wake: (() => void) | null = null;
    let failure: unknown = null;
    const notify = (): void => {
      const w = wake;
      wake = null;
      w?.();
    };

    const groupId = `streamfence-replay-${randomUUID()}`;
    stats.groupId = groupId;
    consumer = kafka.consumer({ groupId, allowAutoTopicCreation: false, retry: { retries: 5 } });
    const c = consumer;
    c.on(c.events.CRASH, (e) => {
      failure = e.payload.error;
      notify();
    });
    await c.connect();
    // Starting at "latest" means nothing is fetched before the seeks below take effect.
    await c.subscribe({ topic, fromBeginning: false });
    await c.run({
      autoCommit: false,
      eachBatch: async ({ batch, heartbeat }) => {
        const r = byPartition.get(batch.partition);
        if (r === undefined || r.done) return;
        for (const m of batch.messages) {
          const offset = Number(m.offset);
          if (offset < r.next || offset >= r.end) continue;
          r.next = offset + 1;
          const ts = Number(m.timestamp);
          if (ts < from || ts >= to) stats.outsideRange++;
          else {
            const raw = m.value === null ? '' : m.value.toString('utf8');
            const result = parseJsonReading(raw);
            r.buf.push({ offset, key: result.ok ? result.reading.ts : ts, raw, result });
          }
          if (offset >= r.end - 1) {
            r.done = true;
            break;
          }
        }
        if (r.done || r.buf.length - r.head >= maxBuf) {
          r.paused = true;
          c.pause([{ topic, partitions: [r.partition] }]);
        }
        notify();
        await heartbeat();
      },
    });
    for (const r of ranges) c.seek({ topic, partition: r.partition, offset: String(r.start) });

    const ready = (): boolean => ranges.every((r) => r.head < r.buf.length || r.done);
    let line = 0;
    let out: InputRecord[] = [];
    for (;;) {
      if (!ready()) {
        if (out.length > 0) {
          yield out;
          out = [];
          continue;
        }
        if (failure !== null) throw readFailure(opts, failure);
        const got = await new Promise<boolean>((resolve) => {
          const timer = setTimeout(() => resolve(false), idleMs);
          wake = () => {
            clearTimeout(timer);
            resolve(true);
          };
        });
        if (failure !== null) throw readFailure(opts, failure);
        if (!got && !ready()) {
          throw new StreamfenceError(
            'SERVICE_UNAVAILABLE',
            `no message from Kafka topic "${topic}" for ${idleMs / 1000} s while the time range was still being read; check that the brokers are healthy and retry`,
          );
        }
        continue;
      }
      // Every unfinished partition has a head: take the smallest.
      let best: PartitionRange | null = null;
      for (const r of ranges) if (r.head < r.buf.length && (best === null || cmp(r, best) < 0)) best = r;
      if (best === null) break; // all done and drained
      const m = best.buf[best.head++];
      if (best.head === best.buf.length) {
        best.buf = [];
        best.head = 0;
      }
      if (best.paused && !best.done && best.buf.length - best.head < maxBuf / 2) {
        best.paused = false;
        c.resume([{ topic, partitions: [best.partition] }]);
      }
      line++;
      stats.messages++;
      out.push({ line, raw: m.raw, result: m.result });
      if (out.length >= batchSize) {
        yield out;
        out = [];
      }
    }
    if (out.length > 0) yield out;
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

function readFailure(opts: KafkaRangeOptions, err: unknown): StreamfenceError {
  return kafkaFailure(err, opts.connection, `read topic ${opts.topic}`);
}
