/**
 * A plant gateway's producer, as the broker-failover test and the failover bench use it: readings
 * keyed by sensor, acks from all in-sync replicas, the idempotent producer, one partition per send
 * (so a send that failed is sent again to that partition only, never doubling what landed
 * elsewhere, and never resolving without one partition's messages: tulios/kafkajs#1303), each send
 * retried until acknowledged. It remembers what Kafka acknowledged per partition, in order.
 */
import type { Producer } from 'kafkajs';
import type { Reading } from '../../libs/engine/reading.js';
import { keyPartitioner } from '../../services/replay/partitioner.js';

const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

/** Sends readings to their partition (as keyed by sensor) until Kafka acknowledges each send. */
export class KafkaGateway {
  /** Per partition, the readings Kafka acknowledged, in order. */
  readonly acknowledged = new Map<number, Reading[]>();
  /** Wall-clock times of failed sends (each sent again). */
  readonly failures: number[] = [];
  /** The longest time one send took until acknowledged (retries included). */
  longestSendMs = 0;
  /** Per partition, the wall-clock time of each acknowledged send, in order. */
  readonly acknowledgedAt = new Map<number, number[]>();
  readonly partitionOf: (sensor: string) => number;

  constructor(
    private readonly producer: Producer,
    private readonly topic: string,
    partitions: number,
  ) {
    this.partitionOf = keyPartitioner(partitions);
  }

  /**
   * Each partition's readings go in sends of `chunk`, `gapMs` apart, one partition independent of
   * the others (a partition without a leader stalls only its own readings, as with a real client).
   */
  async stream(readings: Reading[], chunk: number, gapMs: number): Promise<void> {
    const byPartition = new Map<number, Reading[]>();
    for (const r of readings) {
      const p = this.partitionOf(r.sensor);
      byPartition.set(p, [...(byPartition.get(p) ?? []), r]);
    }
    await Promise.all(
      [...byPartition].map(async ([partition, list]) => {
        for (let i = 0; i < list.length; i += chunk) {
          await this.sendUntilAcknowledged(partition, list.slice(i, i + chunk));
          if (gapMs > 0) await sleep(gapMs);
        }
      }),
    );
  }

  /** How many readings of the partition Kafka has acknowledged so far. */
  acknowledgedCount(partition: number): number {
    return this.acknowledged.get(partition)?.length ?? 0;
  }

  /** One send of readings that all belong to `partition`, sent again (every 0.5 s, 60 times at most) until acknowledged. */
  async sendUntilAcknowledged(partition: number, readings: Reading[]): Promise<void> {
    const messages = readings.map((r) => ({ key: r.sensor, value: JSON.stringify(r), partition }));
    const started = Date.now();
    for (let attempt = 1; ; attempt++) {
      try {
        await this.producer.send({ topic: this.topic, acks: -1, messages });
        this.longestSendMs = Math.max(this.longestSendMs, Date.now() - started);
        const list = this.acknowledged.get(partition);
        if (list) list.push(...readings);
        else this.acknowledged.set(partition, [...readings]);
        const times = this.acknowledgedAt.get(partition);
        if (times) times.push(Date.now());
        else this.acknowledgedAt.set(partition, [Date.now()]);
        return;
      } catch (err) {
        // The idempotent producer sends the same batch again with its sequence numbers, so a send
        // that did land before the error is not written twice.
        this.failures.push(Date.now());
        if (attempt >= 60) throw err;
        await sleep(500);
      }
    }
  }
}
