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
