/**
 * The one list of environment variables the streamfence service reads. Code reads them through these
 * names only; test/unit/compose.test.ts checks docker-compose.yml against this list, so adding a
 * variable here (and reading it) is how a new setting becomes part of the deployment contract.
 */
export const ENV = {
  /** Kafka bootstrap servers, comma-separated host:port. */
  brokers: 'STREAMFENCE_BROKERS',
  /** Redis connection URL for detector state, e.g. redis://127.0.0.1:6379. */
  redisUrl: 'STREAMFENCE_REDIS_URL',
  /** Prefix of every Redis key the monitor writes, so several monitors can share one Redis. */
  statePrefix: 'STREAMFENCE_STATE_PREFIX',
  /** TCP port of the Prometheus metrics endpoint. */
  metricsPort: 'STREAMFENCE_METRICS_PORT',
  /** Live monitor (streamfence run / inspect): each mirrors the command-line option of the same name. */
  inputTopic: 'STREAMFENCE_INPUT_TOPIC',
  alertTopic: 'STREAMFENCE_ALERT_TOPIC',
  rejectedTopic: 'STREAMFENCE_REJECTED_TOPIC',
  group: 'STREAMFENCE_GROUP',
  configFile: 'STREAMFENCE_CONFIG',
  checkpointMs: 'STREAMFENCE_CHECKPOINT_MS',
  checkpointReadings: 'STREAMFENCE_CHECKPOINT_READINGS',
  /** Most sensors one monitor process holds state for; new sensors beyond it are rejected. */
  maxSensors: 'STREAMFENCE_MAX_SENSORS',
  /** Where a monitor starts on a partition it has no state and no committed offset for: now or earliest. */
  startFrom: 'STREAMFENCE_START_FROM',
  /** A first deployment learns the baselines from the history before its start point (true/false). */
  warmStart: 'STREAMFENCE_WARM_START',
  logLevel: 'STREAMFENCE_LOG_LEVEL',
  /** Kafka TLS: "true" turns it on; CA / client certificate / key are PEM file paths. */
  kafkaTls: 'STREAMFENCE_KAFKA_TLS',
  kafkaCaFile: 'STREAMFENCE_KAFKA_CA_FILE',
  kafkaCertFile: 'STREAMFENCE_KAFKA_CERT_FILE',
  kafkaKeyFile: 'STREAMFENCE_KAFKA_KEY_FILE',
  /** Kafka SASL: plain, scram-sha-256 or scram-sha-512; the password from the env or a file. */
  kafkaSaslMechanism: 'STREAMFENCE_KAFKA_SASL_MECHANISM',
  kafkaSaslUsername: 'STREAMFENCE_KAFKA_SASL_USERNAME',
  kafkaSaslPassword: 'STREAMFENCE_KAFKA_SASL_PASSWORD',
  kafkaSaslPasswordFile: 'STREAMFENCE_KAFKA_SASL_PASSWORD_FILE',
  /** Redis ACL user and password (override any in the URL); TLS files for rediss:// URLs. */
  redisUsername: 'STREAMFENCE_REDIS_USERNAME',
  redisPassword: 'STREAMFENCE_REDIS_PASSWORD',
  redisPasswordFile: 'STREAMFENCE_REDIS_PASSWORD_FILE',
  redisCaFile: 'STREAMFENCE_REDIS_CA_FILE',
  redisCertFile: 'STREAMFENCE_REDIS_CERT_FILE',
  redisKeyFile: 'STREAMFENCE_REDIS_KEY_FILE',
  /** Kafka consumer group session timeout (ms): how long a silent monitor keeps its partitions. */
  kafkaSessionTimeoutMs: 'STREAMFENCE_KAFKA_SESSION_TIMEOUT_MS',
  /** Token operators' actions on the board must carry (streamfence board / demo); a secret, so env or file only. */
  boardToken: 'STREAMFENCE_BOARD_TOKEN',
  /** Alert grouping on the board and terminal view: id prefix depth, asset globs (comma-separated), window. */
  groupDepth: 'STREAMFENCE_GROUP_DEPTH',
  groupGlobs: 'STREAMFENCE_GROUP_GLOBS',
  groupWindow: 'STREAMFENCE_GROUP_WINDOW',
  /** File holding the board token (the --board-token-file option). */
  boardTokenFile: 'STREAMFENCE_BOARD_TOKEN_FILE',

  // Options shared by several commands, each mirroring the flag of the same name.
  /** Output folder of replay and tune (--out). */
  outDir: 'STREAMFENCE_OUT',
  /** Input file format of replay and tune when the extension does not say (--format). */
  inputFormat: 'STREAMFENCE_INPUT_FORMAT',
  /** Alert budget, raised alerts per hour (--budget of replay and tune). */
  alertBudget: 'STREAMFENCE_ALERT_BUDGET',
  /** Operator action topic (--action-topic of board and alerts). */
  actionTopic: 'STREAMFENCE_ACTION_TOPIC',
  /** Where board and alerts start reading the alert topic (--since): a time with a zone or a duration back. */
  since: 'STREAMFENCE_SINCE',
  /** HTTP port and address of the board page (--port, --host of board and demo). */
  boardPort: 'STREAMFENCE_BOARD_PORT',
  boardHost: 'STREAMFENCE_BOARD_HOST',
  /** Simulator scenario and seed (--scenario, --seed of simulate and demo). */
  scenario: 'STREAMFENCE_SCENARIO',
  seed: 'STREAMFENCE_SEED',

  // replay
  report: 'STREAMFENCE_REPLAY_REPORT',
  reportTop: 'STREAMFENCE_REPLAY_REPORT_TOP',
  audit: 'STREAMFENCE_REPLAY_AUDIT',
  replayFrom: 'STREAMFENCE_REPLAY_FROM',
  replayTo: 'STREAMFENCE_REPLAY_TO',
  /** Partitions a file replay judges in (as a live topic of that many partitions would). */
  replayPartitions: 'STREAMFENCE_REPLAY_PARTITIONS',

  // tune
  tuneLabels: 'STREAMFENCE_TUNE_LABELS',
  tuneGrid: 'STREAMFENCE_TUNE_GRID',
  tuneGrace: 'STREAMFENCE_TUNE_GRACE',
  tuneWorkers: 'STREAMFENCE_TUNE_WORKERS',

  // simulate
  simDuration: 'STREAMFENCE_SIMULATE_DURATION',
  simInterval: 'STREAMFENCE_SIMULATE_INTERVAL',
  simSensors: 'STREAMFENCE_SIMULATE_SENSORS',
  simStart: 'STREAMFENCE_SIMULATE_START',
  simReadings: 'STREAMFENCE_SIMULATE_READINGS',
  simFormat: 'STREAMFENCE_SIMULATE_FORMAT',
  simLabels: 'STREAMFENCE_SIMULATE_LABELS',
  simNoFaults: 'STREAMFENCE_SIMULATE_NO_FAULTS',
  simKafkaTopic: 'STREAMFENCE_SIMULATE_KAFKA',
  simConfigOut: 'STREAMFENCE_SIMULATE_CONFIG_OUT',

  // alerts
  alertsNoActions: 'STREAMFENCE_ALERTS_NO_ACTIONS',
  alertsSeverity: 'STREAMFENCE_ALERTS_SEVERITY',
  alertsSensor: 'STREAMFENCE_ALERTS_SENSOR',
  alertsOnce: 'STREAMFENCE_ALERTS_ONCE',
  alertsJson: 'STREAMFENCE_ALERTS_JSON',
  /** Whole messages instead of lines fitted to 120 columns (--wide of alerts). */
  alertsWide: 'STREAMFENCE_ALERTS_WIDE',

  // topics
  /** Partitions, replication factor and retention of the topics `streamfence topics` creates or checks. */
  topicsPartitions: 'STREAMFENCE_TOPICS_PARTITIONS',
  topicsReplicationFactor: 'STREAMFENCE_TOPICS_REPLICATION_FACTOR',
  topicsRetention: 'STREAMFENCE_TOPICS_RETENTION',
  /** One JSON object per topic instead of text lines (--json of topics). */
  topicsJson: 'STREAMFENCE_TOPICS_JSON',

  // demo
  demoSpeed: 'STREAMFENCE_DEMO_SPEED',
  demoPreroll: 'STREAMFENCE_DEMO_PREROLL',
} as const;

export type EnvKey = keyof typeof ENV;
export type EnvName = (typeof ENV)[EnvKey];

export const ENV_NAMES: readonly EnvName[] = Object.values(ENV);

export const DEFAULT_METRICS_PORT = 9321;
export const DEFAULT_KAFKA_PORT = 9092;
export const DEFAULT_REDIS_PORT = 6379;
