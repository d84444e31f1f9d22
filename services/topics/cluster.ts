/**
 * What `streamfence topics` asks a Kafka cluster through an admin client: how many brokers it has,
 * how the named topics are laid out (partitions, replicas, effective retention.ms), and creating
 * the missing ones. Errors are left to the caller to word (kafkaFailure).
 */
import kafkajs, { type Admin } from 'kafkajs';
import type { TopicFound, TopicSpec } from '../../libs/topics/plan.js';
import { createTopicsWithLeaders } from '../connect/topics.js';

// kafkajs is CommonJS: its enums are reachable only through the default export under Node ESM.
const { ConfigResourceTypes } = kafkajs;

/** The ACL hides this topic from the user (the broker's TOPIC_AUTHORIZATION_FAILED, with its name). */
export class TopicHidden extends Error {
  /** Kept so the refusal wording (services/connect/refusals.ts) reads it as a topic ACL denial. */
  readonly type = 'TOPIC_AUTHORIZATION_FAILED';
  constructor(
    readonly topic: string,
    cause: unknown,
  ) {
    super(`topic ${topic}: not authorised`, { cause });
    this.name = 'TopicHidden';
  }
}

/** The number of brokers the cluster reports. */
export async function brokerCount(admin: Admin): Promise<number> {
  return (await admin.describeCluster()).brokers.length;
}

/**
 * The named topics the cluster holds, by name (absent names are missing). A topic the ACL hides is
 * missing from the list too: asking for it by name makes the broker say TOPIC_AUTHORIZATION_FAILED,
 * which is thrown, so a denial is never reported as a missing topic.
 */
export async function findTopics(admin: Admin, names: string[]): Promise<Map<string, TopicFound>> {
  const listed = new Set(await admin.listTopics());
  const present = names.filter((n) => listed.has(n));
  for (const name of names.filter((n) => !listed.has(n))) {
    await admin.fetchTopicMetadata({ topics: [name] }).catch((e: unknown) => {
      if ((e as { type?: string }).type === 'TOPIC_AUTHORIZATION_FAILED') throw new TopicHidden(name, e);
    });
  }
  const out = new Map<string, TopicFound>();
  if (present.length === 0) return out;
  const { topics } = await admin.fetchTopicMetadata({ topics: present });
  const configs = await admin.describeConfigs({
    resources: present.map((name) => ({
      type: ConfigResourceTypes.TOPIC,
      name,
      configNames: ['retention.ms'],
    })),
    includeSynonyms: false,
  });
  const retention = new Map<string, number | null>();
  for (const r of configs.resources) {
    const raw = r.configEntries.find((c) => c.configName === 'retention.ms')?.configValue;
    const ms = raw === undefined ? NaN : Number(raw);
    retention.set(r.resourceName, Number.isFinite(ms) ? ms : null);
  }
  for (const t of topics) {
    const replicas = t.partitions.map((p) => p.replicas.length);
    out.set(t.name, {
      name: t.name,
      partitions: t.partitions.length,
      replicationFactor: replicas.length === 0 ? 0 : Math.min(...replicas),
      retentionMs: retention.get(t.name) ?? null,
    });
  }
  return out;
}

/**
 * Creates the topics and waits for their leaders (cluster-wide: see createTopicsWithLeaders). A
 * topic another client made in the meantime is not an error; the caller reads the layout back.
 */
export async function createTopics(admin: Admin, specs: TopicSpec[]): Promise<void> {
  if (specs.length === 0) return;
  await createTopicsWithLeaders(
    admin,
    specs.map((s) => ({
      topic: s.name,
      numPartitions: s.partitions,
      replicationFactor: s.replicationFactor,
      configEntries: [{ name: 'retention.ms', value: String(s.retentionMs) }],
    })),
  );
}
