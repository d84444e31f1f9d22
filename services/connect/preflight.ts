/**
 * One-shot commands (replay kafka://, simulate --kafka, alerts --once, inspect) check their
 * dependencies once, quickly, before any work: an unreachable or refusing service, or a missing
 * topic, is a mistake waiting cannot fix, so it ends the command with one line naming the address
 * and the cause. Long-running commands retry instead and do not use these.
 */

import { StreamfenceError } from '../../libs/errors/index.js';
import { buildKafka } from './kafka.js';
import type { KafkaSettings, RedisSettings } from './options.js';
import { buildRedis, type RedisClient } from './redis.js';
import { kafkaFailure, redisFailure, redisRefusal, redisUnreachable } from './refusals.js';

/** Few retries: a refused port fails in about a second, a silent host within the connect timeouts. */
const ONE_SHOT_RETRIES = 2;

/**
 * Connect to Kafka once and return the topic names it holds. Each topic in `required` must exist
 * (NOT_FOUND naming it and the brokers otherwise).
 */
export async function checkKafka(
  s: KafkaSettings,
  o: { clientId: string; required?: string[]; what?: string },
): Promise<Set<string>> {
  const admin = buildKafka(s, { clientId: o.clientId, retries: ONE_SHOT_RETRIES }).admin();
  let topics: Set<string>;
  try {
    await admin.connect();
    topics = new Set(await admin.listTopics());
    for (const t of o.required ?? []) {
      if (topics.has(t)) continue;
      // A topic the ACL hides is missing from the list too; asking for it by name tells the two
      // apart (the broker answers TOPIC_AUTHORIZATION_FAILED, a NOT_AUTHORISED line below).
      const hidden = await admin.fetchTopicMetadata({ topics: [t] }).then(
        () => null,
        (e: unknown) => ((e as { type?: string }).type === 'TOPIC_AUTHORIZATION_FAILED' ? e : null),
      );
      if (hidden !== null) throw hidden;
      throw new StreamfenceError(
        'NOT_FOUND',
        `kafka ${s.brokers.join(',')}: topic "${t}" does not exist; check the topic name or create it first`,
      );
    }
  } catch (err) {
    throw kafkaFailure(err, s, o.what);
  } finally {
    await admin.disconnect().catch(() => {});
  }
  return topics;
}

/** A connected Redis client that does not reconnect, or the one-line error for why it could not connect. */
export async function connectRedisOnce(s: RedisSettings): Promise<RedisClient> {
  const redis = buildRedis(s, { once: true });
  // connect() rejects with "Connection is closed"; the socket's own error (ECONNREFUSED, ENOTFOUND)
  // arrives as an 'error' event first and names the real cause.
  let socketError: unknown = null;
  redis.on('error', (e) => {
    socketError ??= e;
  });
  try {
    await redis.connect();
  } catch (err) {
    redis.disconnect();
    if (socketError !== null) {
      const named = redisUnreachable(socketError, s) ?? redisRefusal(socketError, s);
      if (named !== null) throw named;
    }
    throw redisFailure(err, s);
  }
  return redis;
}
