/**
 * `streamfence topics create|check`: make the input, alert, rejected and action topics (idempotent:
 * existing ones are left as they are) or report how the cluster's topics compare with the asked
 * partitions, replication factor and retention, so neither a new user nor an SRE needs separate
 * Kafka tooling. Exit 0 when every topic is as asked, 2 with [TOPICS_DIFFER] otherwise.
 */
import { parseDuration } from '../../../libs/config/duration.js';
import {
  RETAIN_FOREVER,
  TOPIC_ROLES,
  checkDistinct,
  checkTopicName,
  mismatchError,
  replicationFor,
  verdictFor,
  verdictLine,
  type TopicFound,
  type TopicRole,
  type TopicSpec,
  type TopicVerdict,
} from '../../../libs/topics/plan.js';
import { ENV } from '../../config/env.js';
import {
  KAFKA_OPTIONS,
  buildKafka,
  connectionHelp,
  kafkaFailure,
  parseArgsOptions,
  readKafkaSettings,
} from '../../connect/index.js';
import {
  envHelp,
  numberOption,
  optionLabel,
  parseCommandArgs,
  printBanner,
  printHelp,
  stringOption,
  usageError,
  type ParsedArgs,
} from '../../setup/args.js';
import { TopicHidden, brokerCount, createTopics, findTopics } from '../../topics/cluster.js';

const CMD = 'topics';
/** Enough for six monitors to share the input (deploy/k8s/monitor.yaml assumes 6). */
export const DEFAULT_PARTITIONS = 6;
/** Kafka's own default retention (log.retention.hours=168): common practice, from memory. */
export const DEFAULT_RETENTION = '7d';
/** The default topic names, as run, board and alerts use them. */
export const DEFAULT_TOPICS: Record<TopicRole, string> = {
  input: 'sensor-readings',
  alert: 'sensor-alerts',
  rejected: 'sensor-readings-rejected',
  action: 'sensor-alert-actions',
};
const ROLE_OPTION: Record<TopicRole, string> = {
  input: 'input-topic',
  alert: 'alert-topic',
  rejected: 'rejected-topic',
  action: 'action-topic',
};
/** Few retries: a one-shot command says within seconds that Kafka cannot be reached. */
const ONE_SHOT_RETRIES = 2;

const HELP = `Usage: streamfence topics create|check [options]

create  makes the input, alert, rejected and action topics that do not exist yet, with the
        partitions, replication factor and retention below; existing topics are never changed.
check   reports each topic: ok, missing, or how it differs from the options below.

Both print one line per topic (stdout) and exit 0 when every topic is as asked, else 2 with
[TOPICS_DIFFER] naming what is missing or different. Give check the options create was given.

  --input-topic <t>          readings (default ${DEFAULT_TOPICS.input}; env ${ENV.inputTopic})
  --alert-topic <t>          alert events (default ${DEFAULT_TOPICS.alert}; env ${ENV.alertTopic})
  --rejected-topic <t>       rejected readings (default ${DEFAULT_TOPICS.rejected}; env ${ENV.rejectedTopic})
  --action-topic <t>         operator actions (default ${DEFAULT_TOPICS.action}; env ${ENV.actionTopic})
  --partitions <n>           partitions of each topic (default ${DEFAULT_PARTITIONS}; the input's bound how many
                             monitors share the work; env ${ENV.topicsPartitions})
  --replication-factor <n>   copies of each partition (default: 3, or the broker count when
                             smaller; never more than the brokers; env ${ENV.topicsReplicationFactor})
  --retention <d>|forever    how long messages are kept: 30m, 36h, 7d, ... (default ${DEFAULT_RETENTION};
                             env ${ENV.topicsRetention})
  --json                     one JSON object per topic instead of text (env ${ENV.topicsJson})
  -h, --help                 this help

${connectionHelp({ kafka: true })}
Creating topics needs a Kafka user allowed to create them (on the secure local stack: admin).
`;

/** topics' own options (the Kafka connection options are services/connect's). */
export const OPTIONS = {
  'input-topic': { type: 'string' },
  'alert-topic': { type: 'string' },
  'rejected-topic': { type: 'string' },
  'action-topic': { type: 'string' },
  partitions: { type: 'string' },
  'replication-factor': { type: 'string' },
  retention: { type: 'string' },
  json: { type: 'boolean' },
} as const;

/** The environment variable of each option (a flag wins); the topic names are run's and board's. */
export const OPTION_ENV: Record<keyof typeof OPTIONS, string> = {
  'input-topic': ENV.inputTopic,
  'alert-topic': ENV.alertTopic,
  'rejected-topic': ENV.rejectedTopic,
  'action-topic': ENV.actionTopic,
  partitions: ENV.topicsPartitions,
  'replication-factor': ENV.topicsReplicationFactor,
  retention: ENV.topicsRetention,
  json: ENV.topicsJson,
};

/** retention.ms of --retention: a positive duration, or "forever". */
function retentionOption(args: ParsedArgs): number {
  const raw = stringOption(args, 'retention', CMD) ?? DEFAULT_RETENTION;
  if (/^(forever|infinite|unlimited)$/i.test(raw.trim())) return RETAIN_FOREVER;
  const ms = parseDuration(raw);
  if (ms === null || ms <= 0)
    usageError(
      `${optionLabel(args, 'retention')} must be a positive duration (30m, 36h, 7d) or "forever", got "${raw}"`,
      CMD,
    );
  return ms;
}

/** The topic names by role, checked: legal Kafka names, each one different. */
function topicNames(args: ParsedArgs): Record<TopicRole, string> {
  const names = {} as Record<TopicRole, string>;
  for (const role of TOPIC_ROLES) {
    names[role] = stringOption(args, ROLE_OPTION[role], CMD) ?? DEFAULT_TOPICS[role];
    checkTopicName(names[role], optionLabel(args, ROLE_OPTION[role]));
  }
  checkDistinct(
    TOPIC_ROLES.map((role) => ({ role, name: names[role], label: optionLabel(args, ROLE_OPTION[role]) })),
  );
  return names;
}

export async function main(argv: string[]): Promise<number> {
  const args = parseCommandArgs(
    CMD,
    argv,
    { ...OPTIONS, ...parseArgsOptions(KAFKA_OPTIONS) },
    true,
    OPTION_ENV,
  );
  if (args.help) return printHelp(HELP + envHelp(OPTION_ENV));
  const [action, ...extra] = args.positionals;
  if (action !== 'create' && action !== 'check')
    usageError(
      action === undefined
        ? 'say what to do: streamfence topics create, or streamfence topics check'
        : `unknown action "${action}"; use create or check`,
      CMD,
    );
  if (extra.length > 0) usageError(`one action only; "${extra.join(' ')}" is not an option`, CMD);
  const names = topicNames(args);
  const partitions = numberOption(args, 'partitions', CMD, {
    whole: true,
    min: 1,
    max: 100_000,
    fallback: DEFAULT_PARTITIONS,
  });
  const askedReplication =
    stringOption(args, 'replication-factor', CMD) === undefined
      ? undefined
      : numberOption(args, 'replication-factor', CMD, { whole: true, min: 1, max: 32_767, fallback: 1 });
  const retentionMs = retentionOption(args);
  const settings = readKafkaSettings(args.values, process.env, { cmd: CMD });
  const at = settings.brokers.join(',');
  const all = TOPIC_ROLES.map((role) => names[role]);

  const admin = buildKafka(settings, { clientId: 'streamfence-topics', retries: ONE_SHOT_RETRIES }).admin();
  let stage = 'connect';
  try {
    await admin.connect();
    stage = 'describe the cluster and its topics';
    const brokers = await brokerCount(admin);
    const replicationFactor = replicationFor(
      askedReplication,
      brokers,
      optionLabel(args, 'replication-factor'),
      at,
    );
    const specs: TopicSpec[] = TOPIC_ROLES.map((role) => ({
      role,
      name: names[role],
      partitions,
      replicationFactor,
      retentionMs,
    }));
    let found: Map<string, TopicFound> = await findTopics(admin, all);
    printBanner(CMD);
    const made = new Set<string>();
    if (action === 'create') {
      const missing = specs.filter((s) => !found.has(s.name));
      stage = `create topics ${missing.map((s) => s.name).join(', ')}`;
      await createTopics(admin, missing);
      for (const s of missing) made.add(s.name);
      if (missing.length > 0) {
        stage = 'describe the topics it created';
        found = await findTopics(admin, all);
      }
    }
    const verdicts = specs.map((s) => verdictFor(s, found.get(s.name), made.has(s.name)));
    report(verdicts, args.values.json === true);
    const mismatch = mismatchError(verdicts, at);
    if (mismatch !== null) throw mismatch;
    return 0;
  } catch (err) {
    if (err instanceof TopicHidden) stage = `describe topic ${err.topic}`;
    throw kafkaFailure(err, settings, stage);
  } finally {
    await admin.disconnect().catch(() => {});
  }
}

function report(verdicts: TopicVerdict[], json: boolean): void {
  const width = Math.max(...verdicts.map((v) => v.name.length));
  for (const v of verdicts) process.stdout.write(`${json ? JSON.stringify(v) : verdictLine(v, width)}\n`);
}
