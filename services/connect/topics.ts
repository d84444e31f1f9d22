/**
 * Creating topics so that they can be used at once, on one broker or several.
 *
 * kafkajs's `createTopics({ waitForLeaders: true })` asks the broker that took the request for the
 * new topic's metadata and gives up on any answer but "leader not available". On a multi-broker
 * KRaft cluster that broker may not have applied the new topic yet and answers "unknown topic or
 * partition", so the call fails for a topic it did create (seen on the local three-broker stack).
 * Here the create does not wait; the wait asks the whole cluster until every partition has a leader.
 */
import type { Admin, ITopicConfig } from 'kafkajs';
import { StreamfenceError } from '../../libs/errors/index.js';

const RETRY_WHILE_NEW = new Set(['UNKNOWN_TOPIC_OR_PARTITION', 'LEADER_NOT_AVAILABLE']);

/** The Kafka error code of an answer, also when kafkajs wrapped it after its own retries. */
function errorType(err: unknown): string {
  const e = err as { type?: unknown; originalError?: { type?: unknown } } | undefined;
  return String(e?.type ?? e?.originalError?.type ?? '');
}

/**
 * Creates the topics (those that exist already are left as they are) and waits until every
 * partition of each has a leader. Resolves true when it created all of them, false when any existed.
 * Topics given without `replicationFactor` get the cluster's default.
 */
export async function createTopicsWithLeaders(
  admin: Admin,
  topics: ITopicConfig[],
  timeoutMs = 30_000,
): Promise<boolean> {
  const created = await admin.createTopics({ topics, waitForLeaders: false, timeout: timeoutMs });
  const names = topics.map((t) => t.topic);
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    try {
      const meta = await admin.fetchTopicMetadata({ topics: names });
      const leaderless = meta.topics.flatMap((t) => t.partitions.filter((p) => p.leader < 0));
      if (meta.topics.length === names.length && leaderless.length === 0) return created;
    } catch (err) {
      if (!RETRY_WHILE_NEW.has(errorType(err))) throw err;
    }
    if (Date.now() > deadline) {
      throw new StreamfenceError(
        'SERVICE_UNAVAILABLE',
        `kafka: topics ${names.join(', ')} still lack a leader for some partition ${timeoutMs / 1000} s after creation; check that enough brokers are running`,
      );
    }
    await new Promise((resolve) => setTimeout(resolve, 100));
  }
}
