/**
 * Helpers for integration tests: the addresses found by global-setup.ts, unique names so tests never
 * share a topic, group or key, and small create/cleanup helpers.
 *
 *   const topic = uniqueName('readings');
 *   await createTopic(topic, 3);
 *   const kafka = kafkaClient();
 *   const redis = redisClient(); const prefix = `${uniqueName('state')}:`;
 *   ... afterAll: await deleteKeysByPrefix(redis, prefix); redis.disconnect(); await deleteTopics(topic);
 */
import { randomBytes } from 'node:crypto';
import { inject } from 'vitest';
import { Kafka, logLevel } from 'kafkajs';
import { Redis } from 'ioredis';
import type { HarnessServices } from './context.js';
import { createTopicsWithLeaders } from '../../services/connect/topics.js';

export type { HarnessServices } from './context.js';

export function services(): HarnessServices {
  const s = inject('streamfenceServices');
  if (!s) {
    throw new Error(
      'streamfence harness: no services provided; these helpers work only in the "integration" vitest project',
    );
  }
  return s;
}

export const kafkaBrokers = (): string[] => services().brokers;
export const redisUrl = (): string => services().redisUrl;

let counter = 0;

/**
 * A name no other test, worker or run uses: prefix-pid-counter-random. Only [A-Za-z0-9._-], so it is a
 * valid Kafka topic and consumer group name and a safe Redis key segment.
 */
export function uniqueName(prefix = 't'): string {
  counter += 1;
  const clean = prefix.replace(/[^A-Za-z0-9._-]/g, '_').slice(0, 100);
  return `${clean}-${process.pid}-${counter}-${randomBytes(3).toString('hex')}`;
}

/** A kafkajs client for the test brokers. Quiet unless STREAMFENCE_TEST_KAFKA_LOG=1. */
export function kafkaClient(clientId = uniqueName('client')): Kafka {
  return new Kafka({
    clientId,
    brokers: kafkaBrokers(),
    logLevel: process.env.STREAMFENCE_TEST_KAFKA_LOG === '1' ? logLevel.INFO : logLevel.NOTHING,
    retry: { retries: 5, initialRetryTime: 100 },
  });
}

/** Creates a topic and waits until every partition has a leader. Topics are never auto-created. */
export async function createTopic(name: string, partitions = 1): Promise<void> {
  const admin = kafkaClient('streamfence-test-admin').admin();
  await admin.connect();
  try {
    const created = await createTopicsWithLeaders(admin, [
      { topic: name, numPartitions: partitions, replicationFactor: 1 },
    ]);
    if (!created) throw new Error(`topic ${name} already exists: use uniqueName() for test topics`);
  } finally {
    await admin.disconnect();
  }
}

export async function deleteTopics(...names: string[]): Promise<void> {
  if (names.length === 0) return;
  const admin = kafkaClient('streamfence-test-admin').admin();
  await admin.connect();
  try {
    await admin.deleteTopics({ topics: names });
  } finally {
    await admin.disconnect();
  }
}

/** An ioredis client for the test Redis; the caller disconnects it (redis.disconnect() or quit()). */
export function redisClient(): Redis {
  return new Redis(redisUrl(), { maxRetriesPerRequest: 2 });
}

/** Deletes every key that starts with prefix (SCAN, never KEYS) and returns how many went. */
export async function deleteKeysByPrefix(redis: Redis, prefix: string): Promise<number> {
  if (prefix.length === 0) throw new Error('deleteKeysByPrefix: refusing an empty prefix');
  // Escape glob characters so the prefix is matched literally.
  const pattern = `${prefix.replace(/[*?[\]\\]/g, '\\$&')}*`;
  let cursor = '0';
  let deleted = 0;
  do {
    const [next, keys] = await redis.scan(cursor, 'MATCH', pattern, 'COUNT', 500);
    cursor = next;
    if (keys.length > 0) deleted += await redis.unlink(...keys);
  } while (cursor !== '0');
  return deleted;
}
