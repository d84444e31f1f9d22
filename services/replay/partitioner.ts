/**
 * Which input partition a sensor's readings land on when they are produced keyed by sensor id:
 * kafkajs's DefaultPartitioner (murmur2 of the key, as the Java client's default), called as a
 * producer would call it, so a file replay with `--partitions N` puts each sensor on the
 * partition a live monitor of an N-partition topic reads it from.
 */
import { Partitioners } from 'kafkajs';
import { partitionMetadataFor } from '../connect/partition-metadata.js';

/** A function from sensor id to partition, for a topic of `partitions` partitions (remembered for recent ids). */
export function keyPartitioner(partitions: number): (sensor: string) => number {
  if (partitions <= 1) return () => 0;
  const partitioner = Partitioners.DefaultPartitioner();
  const partitionMetadata = partitionMetadataFor(partitions);
  const cache = new Map<string, number>();
  return (sensor) => {
    let partition = cache.get(sensor);
    if (partition === undefined) {
      // Bounded: a stream of ever-new ids must not grow memory here (the engine caps its sensors).
      if (cache.size >= 100_000) cache.clear();
      partition = partitioner({
        topic: 'readings',
        partitionMetadata,
        message: { key: sensor, value: null },
      });
      cache.set(sensor, partition);
    }
    return partition;
  };
}
