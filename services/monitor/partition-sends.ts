/**
 * The monitor's alert and reject messages, split into one produce request per topic partition.
 *
 * Why: kafkajs 2.2.4 retries a send that spans several brokers only to the brokers that have not
 * answered yet; when a partition's leader moves during those retries to a broker that already
 * answered for its other partitions, the send resolves without writing that partition's messages
 * (tulios/kafkajs#1303, open; read in kafkajs's `producer/sendMessages.js`). A request that holds
 * one partition goes to one broker, so its retry always goes to that partition's current leader.
 *
 * Each message's partition is the one kafkajs's DefaultPartitioner picks for its key (murmur2, as
 * the Java client), set explicitly so the producer and this split cannot disagree.
 */
import { Partitioners, type Message } from 'kafkajs';
import { partitionMetadataFor } from '../connect/partition-metadata.js';

/** The messages of one topic partition, in the order they were queued: one produce request. */
export interface PartitionSend {
  topic: string;
  partition: number;
  messages: Message[];
}

// Keyed messages never touch the partitioner's round-robin counter (keyless ones are placed by
// the caller), so one shared instance is deterministic.
const defaultPartitioner = Partitioners.DefaultPartitioner();

/**
 * Groups messages by the partition each goes to (its `partition` if set, else kafkajs's
 * DefaultPartitioner on its key over `partitions` partitions), keeping their order within each
 * partition. Every returned message carries its partition. A message with neither a key nor a
 * partition is a programming error: it would land on a random partition.
 */
export function partitionSends(topic: string, partitions: number, messages: Message[]): PartitionSend[] {
  if (!Number.isInteger(partitions) || partitions < 1)
    throw new Error(`topic ${topic}: partition count ${partitions} is not a positive integer`);
  const partitionMetadata = partitionMetadataFor(partitions);
  const byPartition = new Map<number, Message[]>();
  for (const message of messages) {
    if (message.partition === undefined && (message.key === null || message.key === undefined))
      throw new Error(`topic ${topic}: a message without key needs its partition set`);
    const partition = defaultPartitioner({ topic, partitionMetadata, message });
    if (partition < 0 || partition >= partitions)
      throw new Error(`topic ${topic}: partition ${partition} is outside 0..${partitions - 1}`);
    const list = byPartition.get(partition);
    const placed = { ...message, partition };
    if (list) list.push(placed);
    else byPartition.set(partition, [placed]);
  }
  return [...byPartition]
    .sort(([a], [b]) => a - b)
    .map(([partition, list]) => ({ topic, partition, messages: list }));
}

/**
 * Bytes of messages in one produce request. Kafka refuses a record batch above the broker's
 * `message.max.bytes` (1,048,588 by default) with "message larger than the max message size",
 * and a retry sends the same batch again: a checkpoint holding tens of thousands of rejects (a
 * producer flooding new sensor ids past the limit) would retry forever. Half the default leaves
 * room for the records' own framing.
 */
export const MAX_REQUEST_BYTES = 512 * 1024;
/** Framing of one record in a batch beyond its key and value (varints, attributes), rounded up. */
const RECORD_OVERHEAD_BYTES = 32;

const sizeOf = (part: Message['key'] | Message['value']): number =>
  part === null || part === undefined ? 0 : typeof part === 'string' ? Buffer.byteLength(part) : part.length;

/**
 * One partition's messages cut into consecutive requests of at most `maxBytes` each (a message
 * larger than that goes alone), order kept: send them one after another.
 */
export function requestChunks(messages: Message[], maxBytes = MAX_REQUEST_BYTES): Message[][] {
  const chunks: Message[][] = [];
  let chunk: Message[] = [];
  let bytes = 0;
  for (const message of messages) {
    const size = sizeOf(message.key) + sizeOf(message.value) + RECORD_OVERHEAD_BYTES;
    if (chunk.length > 0 && bytes + size > maxBytes) {
      chunks.push(chunk);
      chunk = [];
      bytes = 0;
    }
    chunk.push(message);
    bytes += size;
  }
  if (chunk.length > 0) chunks.push(chunk);
  return chunks;
}
