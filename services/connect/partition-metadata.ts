/**
 * Topic metadata as kafkajs's DefaultPartitioner reads it, for placing keys without asking a
 * broker: for a keyed message only the partition count matters (murmur2 of the key modulo the
 * count, as the Java client's default), so leaders and replicas are placeholders.
 */
import type { PartitionMetadata } from 'kafkajs';

/** Metadata for a topic of `count` partitions, numbered 0..count-1, enough for the partitioner. */
export function partitionMetadataFor(count: number): PartitionMetadata[] {
  return Array.from({ length: count }, (_, partitionId) => ({
    partitionId,
    leader: 0,
    partitionErrorCode: 0,
    replicas: [0],
    isr: [0],
    offlineReplicas: [],
  }));
}
