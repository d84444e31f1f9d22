/**
 * The monitor's publish split (services/monitor/partition-sends.ts): one request per partition,
 * each message on the partition kafkajs itself would pick, order kept within each partition.
 * Reference: kafkajs 2.2.4's own grouping (`src/producer/groupMessagesPerPartition.js`, what its
 * `send` does before it splits a request by leader) with its DefaultPartitioner.
 */
import { createRequire } from 'node:module';
import fc from 'fast-check';
import { Partitioners, type Message, type PartitionMetadata } from 'kafkajs';
import { describe, expect, it } from 'vitest';
import {
  MAX_REQUEST_BYTES,
  partitionSends,
  requestChunks,
} from '../../../services/monitor/partition-sends.js';

type Grouping = (args: {
  topic: string;
  partitionMetadata: PartitionMetadata[];
  messages: Message[];
  partitioner: ReturnType<typeof Partitioners.DefaultPartitioner>;
}) => Record<string, Message[]>;
const kafkajsGrouping = createRequire(import.meta.url)(
  'kafkajs/src/producer/groupMessagesPerPartition.js',
) as Grouping;

function metadata(count: number): PartitionMetadata[] {
  return Array.from({ length: count }, (_, partitionId) => ({
    partitionId,
    leader: partitionId % 3,
    partitionErrorCode: 0,
    replicas: [0, 1, 2],
    isr: [0, 1, 2],
    offlineReplicas: [],
  }));
}

/** Sensor-like keys (strings) and raw input keys (buffers), some repeated. */
const keyArb = fc.oneof(
  fc.constantFrom('pump-1.flow', 'pump-2.flow', 'tank-7.level', 'boiler-3.temp'),
  fc.string({ minLength: 1, maxLength: 12 }),
  fc.uint8Array({ minLength: 1, maxLength: 12 }).map((bytes) => Buffer.from(bytes)),
);
const messagesArb = fc.array(
  keyArb.map((key) => ({ key })),
  { maxLength: 200 },
);

const numbered = (list: { key: string | Buffer }[]): Message[] =>
  list.map((m, index) => ({ key: m.key, value: String(index) }));

describe('partitionSends', () => {
  it('puts each keyed message where kafkajs would, one request per partition, order kept', () => {
    fc.assert(
      fc.property(messagesArb, fc.integer({ min: 1, max: 12 }), (list, partitions) => {
        const messages = numbered(list);
        const sends = partitionSends('alerts', partitions, messages);
        const reference = kafkajsGrouping({
          topic: 'alerts',
          partitionMetadata: metadata(partitions),
          messages,
          partitioner: Partitioners.DefaultPartitioner(),
        });
        // Same partitions, same messages in the same order in each (kafkajs's order is queue order).
        const got = Object.fromEntries(
          sends.map((s) => [String(s.partition), s.messages.map((m) => m.value)]),
        );
        const want = Object.fromEntries(
          Object.entries(reference).map(([partition, held]) => [partition, held.map((m) => m.value)]),
        );
        expect(got).toEqual(want);
        // One request per partition, each message labelled with it, nothing lost or doubled.
        expect(new Set(sends.map((s) => s.partition)).size).toBe(sends.length);
        for (const s of sends) {
          expect(s.topic).toBe('alerts');
          for (const m of s.messages) expect(m.partition).toBe(s.partition);
        }
        expect(sends.flatMap((s) => s.messages).length).toBe(messages.length);
      }),
    );
  });

  it('keeps a partition already set (keyless rejects placed by their input partition)', () => {
    const sends = partitionSends('rejected', 3, [
      { key: null, value: 'a', partition: 2 },
      { key: 'pump-1.flow', value: 'b', partition: 0 },
      { key: null, value: 'c', partition: 2 },
    ]);
    expect(sends.map((s) => [s.partition, s.messages.map((m) => m.value)])).toEqual([
      [0, ['b']],
      [2, ['a', 'c']],
    ]);
  });

  it('is the same split every time (no random partition for any message)', () => {
    fc.assert(
      fc.property(messagesArb, fc.integer({ min: 1, max: 12 }), (list, partitions) => {
        const messages = numbered(list);
        expect(partitionSends('t', partitions, messages)).toEqual(partitionSends('t', partitions, messages));
      }),
    );
  });

  it('refuses a message that would land on a random partition, and a bad count', () => {
    expect(() => partitionSends('t', 3, [{ key: null, value: 'x' }])).toThrow(/without key/);
    expect(() => partitionSends('t', 0, [{ key: 'k', value: 'x' }])).toThrow(/positive integer/);
    expect(() => partitionSends('t', 3, [{ key: null, value: 'x', partition: 3 }])).toThrow(/outside 0..2/);
  });

  it('sends nothing for no messages', () => {
    expect(partitionSends('t', 3, [])).toEqual([]);
  });
});

describe('requestChunks', () => {
  const bytes = (m: Message) =>
    Buffer.byteLength(String(m.key ?? '')) + Buffer.byteLength(String(m.value ?? '')) + 32;

  it('cuts a partition into consecutive requests under the size, order kept, nothing lost', () => {
    fc.assert(
      fc.property(
        fc.array(fc.string({ maxLength: 300 }), { maxLength: 300 }),
        fc.integer({ min: 64, max: 4_000 }),
        (values, maxBytes) => {
          const messages: Message[] = values.map((value, index) => ({ key: `k${index}`, value }));
          const chunks = requestChunks(messages, maxBytes);
          expect(chunks.flat()).toEqual(messages);
          for (const chunk of chunks) {
            expect(chunk.length).toBeGreaterThan(0);
            const size = chunk.reduce((sum, m) => sum + bytes(m), 0);
            if (chunk.length > 1) expect(size).toBeLessThanOrEqual(maxBytes);
          }
          // Greedy: each cut was needed (the next message would not have fitted).
          for (let i = 0; i + 1 < chunks.length; i++) {
            const size = chunks[i].reduce((sum, m) => sum + bytes(m), 0);
            expect(size + bytes(chunks[i + 1][0])).toBeGreaterThan(maxBytes);
          }
        },
      ),
    );
  });

  it('keeps a flood of rejects under the broker default (1,048,588 bytes per batch)', () => {
    const reject = JSON.stringify({ reason: 'sensor_limit', detail: 'x'.repeat(120), raw: 'y'.repeat(200) });
    const messages: Message[] = Array.from({ length: 50_000 }, (_, i) => ({
      key: `gateway/seq-${i}`,
      value: reject,
    }));
    const chunks = requestChunks(messages);
    expect(chunks.length).toBeGreaterThan(1);
    expect(MAX_REQUEST_BYTES).toBeLessThan(1_048_588);
    for (const chunk of chunks)
      expect(chunk.reduce((sum, m) => sum + bytes(m), 0)).toBeLessThanOrEqual(MAX_REQUEST_BYTES);
  });

  it('sends a message larger than the size alone', () => {
    const big = { key: 'a', value: 'z'.repeat(1_000) };
    expect(requestChunks([{ key: 'b', value: '1' }, big, { key: 'c', value: '2' }], 100)).toEqual([
      [{ key: 'b', value: '1' }],
      [big],
      [{ key: 'c', value: '2' }],
    ]);
  });
});
