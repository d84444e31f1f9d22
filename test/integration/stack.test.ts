/**
 * Proves the services the monitor depends on work end to end with the project's own clients
 * (kafkajs 2.2.4, ioredis 5): a broken or half-started stack fails here, before any monitor test.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { Partitioners, type Consumer, type EachMessagePayload } from 'kafkajs';
import {
  createTopic,
  deleteKeysByPrefix,
  deleteTopics,
  kafkaClient,
  redisClient,
  uniqueName,
} from '../harness/services.js';

const PARTITIONS = 3;
const KEYS = 12;
const PER_KEY = 25;

interface Seen {
  key: string;
  seq: number;
  partition: number;
  offset: bigint;
  member: string;
}

/** Resolves when the predicate holds, polling; rejects with the label after timeoutMs. */
async function until(label: string, predicate: () => boolean, timeoutMs = 30_000): Promise<void> {
  const deadline = Date.now() + timeoutMs;
  while (!predicate()) {
    if (Date.now() > deadline) throw new Error(`timed out waiting for ${label}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

describe('Kafka through kafkajs', () => {
  const topic = uniqueName('stack-kafka');
  const groupId = uniqueName('stack-group');
  const kafka = kafkaClient();
  const consumers: Consumer[] = [];

  afterAll(async () => {
    await Promise.allSettled(consumers.map((c) => c.disconnect()));
    await deleteTopics(topic).catch(() => undefined);
  });

  async function startMember(name: string, seen: Seen[], assigned: Map<string, number[]>): Promise<Consumer> {
    const consumer = kafka.consumer({ groupId, heartbeatInterval: 500, sessionTimeout: 10_000 });
    consumers.push(consumer);
    consumer.on(consumer.events.GROUP_JOIN, (e) => {
      assigned.set(name, e.payload.memberAssignment[topic] ?? []);
    });
    await consumer.connect();
    await consumer.subscribe({ topics: [topic], fromBeginning: true });
    await consumer.run({
      eachMessage: async ({ partition, message }: EachMessagePayload) => {
        const body = JSON.parse(message.value!.toString()) as { key: string; seq: number };
        expect(message.key!.toString()).toBe(body.key);
        seen.push({ key: body.key, seq: body.seq, partition, offset: BigInt(message.offset), member: name });
      },
    });
    return consumer;
  }

  it('delivers every message once, in key order, across a two-member consumer group', async () => {
    await createTopic(topic, PARTITIONS);
    const seen: Seen[] = [];
    const assigned = new Map<string, number[]>();

    await startMember('a', seen, assigned);
    await startMember('b', seen, assigned);
    // Produce only once the group has settled with both members sharing all partitions, so no message
    // is handed over mid-rebalance (which at-least-once delivery may legitimately repeat).
    await until('both members to share all partitions', () => {
      const a = assigned.get('a') ?? [];
      const b = assigned.get('b') ?? [];
      const all = new Set([...a, ...b]);
      return a.length > 0 && b.length > 0 && a.length + b.length === PARTITIONS && all.size === PARTITIONS;
    });

    const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner });
    await producer.connect();
    try {
      // Interleave keys so per-key order is a real property of the partitioning, not of batching.
      for (let seq = 0; seq < PER_KEY; seq++) {
        await producer.send({
          topic,
          messages: Array.from({ length: KEYS }, (_, k) => {
            const key = `sensor-${k}`;
            return { key, value: JSON.stringify({ key, seq }) };
          }),
        });
      }
    } finally {
      await producer.disconnect();
    }

    const total = KEYS * PER_KEY;
    await until(`${total} messages`, () => seen.length >= total);
    // Give a duplicate a moment to show up before judging.
    await new Promise((r) => setTimeout(r, 500));
    expect(seen).toHaveLength(total);

    const ids = new Set(seen.map((s) => `${s.key}#${s.seq}`));
    expect(ids.size).toBe(total);

    const byKey = new Map<string, Seen[]>();
    for (const s of seen) byKey.set(s.key, [...(byKey.get(s.key) ?? []), s]);
    expect(byKey.size).toBe(KEYS);
    for (const [key, list] of byKey) {
      // One key, one partition, one member; sequence follows offsets.
      expect(new Set(list.map((s) => s.partition)).size, key).toBe(1);
      expect(new Set(list.map((s) => s.member)).size, key).toBe(1);
      expect(list.map((s) => s.seq)).toEqual(Array.from({ length: PER_KEY }, (_, i) => i));
      const offsets = list.map((s) => s.offset);
      expect(offsets).toEqual([...offsets].sort((x, y) => (x < y ? -1 : x > y ? 1 : 0)));
    }
    // Both members did work and the 12 keys spread over more than one partition.
    expect(new Set(seen.map((s) => s.member)).size).toBe(2);
    expect(new Set(seen.map((s) => s.partition)).size).toBeGreaterThan(1);
  });

  it('commits the group offsets, so a restarted group resumes after them', async () => {
    await Promise.all(consumers.splice(0).map((c) => c.disconnect()));

    const admin = kafka.admin();
    await admin.connect();
    try {
      const ends = await admin.fetchTopicOffsets(topic);
      const [committed] = await admin.fetchOffsets({ groupId, topics: [topic] });
      const endOf = new Map(ends.map((p) => [p.partition, p.offset]));
      for (const p of committed.partitions) expect(p.offset).toBe(endOf.get(p.partition));
    } finally {
      await admin.disconnect();
    }

    const producer = kafka.producer({ createPartitioner: Partitioners.DefaultPartitioner });
    await producer.connect();
    await producer.send({
      topic,
      messages: [{ key: 'sensor-late', value: JSON.stringify({ key: 'sensor-late', seq: 0 }) }],
    });
    await producer.disconnect();

    const seen: Seen[] = [];
    await startMember('c', seen, new Map());
    await until('the one new message', () => seen.length >= 1);
    await new Promise((r) => setTimeout(r, 500));
    expect(seen.map((s) => s.key)).toEqual(['sensor-late']);
  });
});

describe('Redis through ioredis', () => {
  const redis = redisClient();
  const prefix = `${uniqueName('stack-redis')}:`;

  afterAll(async () => {
    await deleteKeysByPrefix(redis, prefix);
    redis.disconnect();
  });

  it('round-trips strings, hashes and a MULTI/EXEC transaction', async () => {
    await redis.set(`${prefix}plain`, 'héllo', 'EX', 60);
    expect(await redis.get(`${prefix}plain`)).toBe('héllo');

    await redis.hset(`${prefix}sensor:1`, { count: '3', mean: '20.5', unit: '°C' });
    expect(await redis.hgetall(`${prefix}sensor:1`)).toEqual({ count: '3', mean: '20.5', unit: '°C' });

    const results = await redis
      .multi()
      .hincrby(`${prefix}sensor:1`, 'count', 2)
      .hset(`${prefix}sensor:1`, 'mean', '21')
      .incr(`${prefix}counter`)
      .expire(`${prefix}counter`, 60)
      .exec();
    expect(results).not.toBeNull();
    expect(results!.map(([err]) => err)).toEqual([null, null, null, null]);
    expect(results!.map(([, value]) => value)).toEqual([5, 0, 1, 1]);
    expect(await redis.hget(`${prefix}sensor:1`, 'count')).toBe('5');
  });

  it('WATCH aborts a transaction when the key changed underneath', async () => {
    const key = `${prefix}watched`;
    await redis.set(key, '1');
    await redis.watch(key);
    const other = redisClient();
    try {
      await other.set(key, '2');
    } finally {
      other.disconnect();
    }
    expect(await redis.multi().set(key, '3').exec()).toBeNull();
    expect(await redis.get(key)).toBe('2');
  });

  it('deleteKeysByPrefix removes exactly the prefixed keys', async () => {
    const outside = `${uniqueName('stack-redis-outside')}:x`;
    await redis.set(outside, 'keep', 'EX', 60);
    for (let i = 0; i < 30; i++) await redis.set(`${prefix}bulk:${i}`, String(i), 'EX', 60);
    const deleted = await deleteKeysByPrefix(redis, prefix);
    expect(deleted).toBeGreaterThanOrEqual(30);
    const [, left] = await redis.scan('0', 'MATCH', `${prefix}*`, 'COUNT', 1000);
    expect(left).toEqual([]);
    expect(await redis.get(outside)).toBe('keep');
    await redis.del(outside);
  });
});
