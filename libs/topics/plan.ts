/**
 * The topics streamfence uses (input, alert, rejected, action) and how a topic found on a cluster
 * compares with the one asked for: partitions, replication factor, retention. Pure: the command
 * (`streamfence topics`, services/cli/commands/topics.ts) asks Kafka and prints; the decisions and
 * their words are here, so they are unit-tested without a cluster.
 */
import { formatDuration } from '../config/duration.js';
import { StreamfenceError } from '../errors/index.js';

/** What each topic is for, in the order they are reported. */
export const TOPIC_ROLES = ['input', 'alert', 'rejected', 'action'] as const;
/** One of TOPIC_ROLES. */
export type TopicRole = (typeof TOPIC_ROLES)[number];

/** The most replicas streamfence asks for when none are given (common practice: 3 copies). */
export const DEFAULT_MAX_REPLICATION = 3;

/** Retention written as -1 in Kafka: keep messages forever. */
export const RETAIN_FOREVER = -1;

/** A topic as asked for. */
export interface TopicSpec {
  role: TopicRole;
  name: string;
  partitions: number;
  replicationFactor: number;
  /** retention.ms; RETAIN_FOREVER for no limit. */
  retentionMs: number;
}

/** A topic as the cluster holds it. */
export interface TopicFound {
  name: string;
  partitions: number;
  /** The replica count of its partitions (the smallest one if they differ). */
  replicationFactor: number;
  /** The topic's effective retention.ms (its own or the broker default); null when not readable. */
  retentionMs: number | null;
}

/** ok: as asked; created: made now; missing: absent; differs: present but not as asked. */
export type TopicStatus = 'ok' | 'created' | 'missing' | 'differs';

/** One topic's report. */
export interface TopicVerdict {
  role: TopicRole;
  name: string;
  status: TopicStatus;
  /** What was asked. */
  asked: Pick<TopicSpec, 'partitions' | 'replicationFactor' | 'retentionMs'>;
  /** What the cluster holds (null when missing). */
  found: Omit<TopicFound, 'name'> | null;
  /** One phrase per difference ("partitions 3, asked 6"); empty unless status is differs. */
  differences: string[];
}

/** Kafka's legal topic names: 1-249 of [A-Za-z0-9._-], and not "." or "..". */
const LEGAL_NAME = /^[A-Za-z0-9._-]{1,249}$/;

/** ARGS_INVALID for a name Kafka would refuse, naming the option it came from. */
export function checkTopicName(name: string, label: string): void {
  if (!LEGAL_NAME.test(name) || name === '.' || name === '..')
    throw new StreamfenceError(
      'ARGS_INVALID',
      `${label} "${name}" is not a Kafka topic name: use 1-249 letters, digits, ".", "_" or "-"`,
    );
}

/** ARGS_INVALID when two roles were given the same topic (alerts read back as readings, …). */
export function checkDistinct(names: { role: TopicRole; name: string; label: string }[]): void {
  for (let i = 0; i < names.length; i++)
    for (let j = i + 1; j < names.length; j++)
      if (names[i].name === names[j].name)
        throw new StreamfenceError(
          'ARGS_INVALID',
          `${names[i].label} and ${names[j].label} are both "${names[i].name}"; each topic has one job, give them different names`,
        );
}

/**
 * The replication factor to use on a cluster of `brokers` brokers: the one asked for (refused when
 * it exceeds the broker count, which Kafka could never place), else the smaller of 3 and the
 * broker count. `label` names the option in the message.
 */
export function replicationFor(
  asked: number | undefined,
  brokers: number,
  label: string,
  at: string,
): number {
  if (asked === undefined) return Math.min(DEFAULT_MAX_REPLICATION, Math.max(1, brokers));
  if (asked > brokers)
    throw new StreamfenceError(
      'ARGS_INVALID',
      `${label} ${asked} is more than the ${brokers} broker${brokers === 1 ? '' : 's'} of the cluster at ${at}; give at most ${brokers}`,
    );
  return asked;
}

/** A retention in words: "7d", "36h", "forever". */
export function retentionText(ms: number | null): string {
  if (ms === null) return 'unknown';
  return ms < 0 ? 'forever' : formatDuration(ms);
}

/** The differences between a topic asked for and one found, one phrase each. */
export function differences(spec: TopicSpec, found: TopicFound): string[] {
  const out: string[] = [];
  if (found.partitions !== spec.partitions)
    out.push(`partitions ${found.partitions}, asked ${spec.partitions}`);
  if (found.replicationFactor !== spec.replicationFactor)
    out.push(`replication factor ${found.replicationFactor}, asked ${spec.replicationFactor}`);
  // Kafka treats every negative retention as "no limit".
  const same =
    found.retentionMs !== null &&
    (found.retentionMs === spec.retentionMs || (found.retentionMs < 0 && spec.retentionMs < 0));
  if (!same)
    out.push(`retention ${retentionText(found.retentionMs)}, asked ${retentionText(spec.retentionMs)}`);
  return out;
}

/** The verdict on one topic; `created` marks a topic made by this run. */
export function verdictFor(spec: TopicSpec, found: TopicFound | undefined, created = false): TopicVerdict {
  const asked = {
    partitions: spec.partitions,
    replicationFactor: spec.replicationFactor,
    retentionMs: spec.retentionMs,
  };
  if (found === undefined)
    return { role: spec.role, name: spec.name, status: 'missing', asked, found: null, differences: [] };
  const diff = differences(spec, found);
  const { name: _name, ...held } = found;
  const status: TopicStatus = diff.length > 0 ? 'differs' : created ? 'created' : 'ok';
  return { role: spec.role, name: spec.name, status, asked, found: held, differences: diff };
}

/**
 * The report line of one verdict, names padded to `nameWidth`:
 * `alert    sensor-alerts  ok       partitions 6, replication 3, retention 7d`.
 */
export function verdictLine(verdict: TopicVerdict, nameWidth = 0): string {
  const head = `${verdict.role.padEnd(9)}${verdict.name.padEnd(nameWidth)}  ${verdict.status.padEnd(7)}`;
  if (verdict.found === null)
    return `${head}  (asked: partitions ${verdict.asked.partitions}, replication ${verdict.asked.replicationFactor}, retention ${retentionText(verdict.asked.retentionMs)})`;
  if (verdict.status === 'differs') return `${head}  ${verdict.differences.join('; ')}`;
  return `${head}  partitions ${verdict.found.partitions}, replication ${verdict.found.replicationFactor}, retention ${retentionText(verdict.found.retentionMs)}`;
}

/**
 * The one-line error when any topic is missing or differs (null when all are as asked). `create`
 * never changes an existing topic: more partitions would move sensors to other partitions and away
 * from their stored state, so a difference is for the operator to settle.
 */
export function mismatchError(verdicts: TopicVerdict[], at: string): StreamfenceError | null {
  const bad = verdicts.filter((v) => v.status === 'missing' || v.status === 'differs');
  if (bad.length === 0) return null;
  const parts = bad.map((v) =>
    v.status === 'missing' ? `${v.name} is missing` : `${v.name}: ${v.differences.join(', ')}`,
  );
  const missingOnly = bad.every((v) => v.status === 'missing');
  const hint = missingOnly
    ? 'run "streamfence topics create" with the same options'
    : 'streamfence never changes an existing topic (more partitions would move sensors away from their stored state): give the options it was made with, or delete and re-create it while nothing uses it';
  return new StreamfenceError(
    'TOPICS_DIFFER',
    `kafka ${at}: ${bad.length} of ${verdicts.length} topics not as asked (${parts.join('; ')}); ${hint}`,
  );
}
