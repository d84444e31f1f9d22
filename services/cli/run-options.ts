/**
 * `streamfence run` options: each flag has an environment variable (services/config/env.ts); the
 * flag wins. The Kafka and Redis connection options are the shared ones of services/connect/;
 * secrets (SASL and Redis passwords) come from the environment or a file, never a flag.
 */
import { DEFAULT_MAX_SENSORS } from '../../libs/engine/sensor-budget.js';
import { ENV, DEFAULT_METRICS_PORT } from '../config/env.js';
import {
  KAFKA_OPTIONS,
  REDIS_OPTIONS,
  parseArgsOptions,
  readKafkaSettings,
  readRedisSettings,
  type KafkaSettings,
  type OptionSpec,
  type RedisSettings,
} from '../connect/index.js';
import { LOG_LEVELS, type LogLevel } from '../log.js';
import { START_FROM, type StartFrom } from '../monitor/monitor.js';
import { PORT_OR_ANY_RULE, parseCommandArgs, parseNumber, usageError } from '../setup/args.js';

export { optionsHelp } from '../connect/index.js';

/** Everything `streamfence run` needs, from flags, the environment and defaults. */
export interface MonitorOptions {
  statePrefix: string;
  inputTopic: string;
  alertTopic: string;
  rejectedTopic: string;
  group: string;
  metricsPort: number;
  configFile: string | null;
  checkpointMs: number;
  checkpointReadings: number;
  maxSensors: number;
  startFrom: StartFrom;
  warmStart: boolean;
  sessionTimeoutMs: number;
  logLevel: LogLevel;
  kafka: KafkaSettings;
  redis: RedisSettings;
}

/** The options only `run` has; the connection options follow them in RUN_OPTIONS. */
const MONITOR_OPTIONS: Record<string, OptionSpec> = {
  'state-prefix': { env: ENV.statePrefix, def: 'streamfence', help: 'prefix of every Redis key written' },
  'input-topic': {
    env: ENV.inputTopic,
    def: 'sensor-readings',
    help: 'topic of readings {sensor, ts, value}',
  },
  'alert-topic': { env: ENV.alertTopic, def: 'sensor-alerts', help: 'topic alert events are published to' },
  'rejected-topic': {
    env: ENV.rejectedTopic,
    def: 'sensor-readings-rejected',
    help: 'topic malformed and late readings are published to, with the reason',
  },
  group: {
    env: ENV.group,
    def: 'streamfence',
    help: 'Kafka consumer group (monitors in one group share partitions)',
  },
  'metrics-port': {
    env: ENV.metricsPort,
    def: String(DEFAULT_METRICS_PORT),
    help: 'port of /metrics, /healthz, /readyz, 1-65535 (0 = any free port, logged)',
  },
  config: { env: ENV.configFile, help: 'engine config file (YAML or JSON); built-in defaults when absent' },
  'checkpoint-ms': {
    env: ENV.checkpointMs,
    def: '1000',
    help: 'checkpoint state to Redis at least this often (ms)',
  },
  'checkpoint-readings': {
    env: ENV.checkpointReadings,
    def: '50000',
    help: 'also checkpoint a partition after this many readings',
  },
  'max-sensors': {
    env: ENV.maxSensors,
    def: String(DEFAULT_MAX_SENSORS),
    help: 'most sensors held in memory and Redis; readings of new sensors beyond it are rejected (sensor_limit)',
  },
  'start-from': {
    env: ENV.startFrom,
    def: 'now',
    help: `where to start on a partition with no stored state and no committed offset: ${START_FROM.join(' or ')} (now = the end of the topic when the monitor starts)`,
  },
  'warm-start': {
    env: ENV.warmStart,
    type: 'boolean',
    help: 'on a first deployment, learn the baselines from the history before the start point (window + one bucket) before judging',
  },
  'session-timeout-ms': {
    env: ENV.kafkaSessionTimeoutMs,
    def: '30000',
    help: 'consumer group session timeout: a crashed monitor keeps its partitions this long (ms)',
  },
  'log-level': { env: ENV.logLevel, def: 'info', help: `log level: ${LOG_LEVELS.join(', ')}` },
};

/** The options of `streamfence run`, in help order. */
export const RUN_OPTIONS: Record<string, OptionSpec> = {
  ...MONITOR_OPTIONS,
  ...KAFKA_OPTIONS,
  ...REDIS_OPTIONS,
};

const CMD = 'run';

function invalid(message: string): never {
  return usageError(message, CMD);
}

/** A switch: the flag, or its variable as true/false (anything else is refused). */
function switchValue(values: Record<string, unknown>, env: NodeJS.ProcessEnv, name: string): boolean {
  if (values[name] === true) return true;
  const variable = MONITOR_OPTIONS[name].env!;
  const raw = env[variable] ?? '';
  if (raw === '' || /^(0|false|no|off)$/i.test(raw)) return false;
  if (/^(1|true|yes|on)$/i.test(raw)) return true;
  return invalid(`${variable} must be true or false, got "${raw}"`);
}

const wholeNumber = (raw: string, name: string, min: number): number =>
  parseNumber(raw, name, { whole: true, min }, CMD);

/**
 * Parse `streamfence run`'s command line and environment (a flag wins over its variable, which
 * wins over the default). Unusable values are refused with ARGS_INVALID naming the option.
 */
export function parseRunOptions(
  argv: string[],
  env: NodeJS.ProcessEnv,
): { help: true } | { help: false; opts: MonitorOptions } {
  const parsed = parseCommandArgs(CMD, argv, parseArgsOptions(RUN_OPTIONS), false);
  if (parsed.help) return { help: true };
  const values = parsed.values;

  const get = (name: string): string | undefined => {
    const v = values[name];
    if (typeof v === 'string') return v;
    const s = MONITOR_OPTIONS[name];
    const fromEnv = s.env ? env[s.env] : undefined;
    if (fromEnv !== undefined && fromEnv !== '') return fromEnv;
    return s.def;
  };

  const kafka = readKafkaSettings(values, env, { cmd: CMD });
  const redis = readRedisSettings(values, env, { cmd: CMD, required: true });

  const logLevel = get('log-level') as LogLevel;
  if (!LOG_LEVELS.includes(logLevel)) invalid(`--log-level must be one of ${LOG_LEVELS.join(', ')}`);

  const startFrom = get('start-from') as StartFrom;
  if (!START_FROM.includes(startFrom))
    invalid(`--start-from must be ${START_FROM.join(' or ')}, got "${startFrom}"`);

  const warmStart = switchValue(values, env, 'warm-start');
  if (warmStart && startFrom === 'earliest')
    invalid(
      '--warm-start learns from the history before the start point, but --start-from earliest leaves none; drop one of them',
    );

  const group = get('group')!;
  const inputTopic = get('input-topic')!;
  for (const [n, v] of [
    ['group', group],
    ['input-topic', inputTopic],
  ]) {
    // ':' separates the parts of our Redis keys; Kafka topic names never contain it.
    if (!/^[A-Za-z0-9._-]+$/.test(v))
      invalid(`--${n} "${v}" may contain only letters, digits, '.', '_' and '-'`);
  }

  return {
    help: false,
    opts: {
      statePrefix: get('state-prefix')!,
      inputTopic,
      alertTopic: get('alert-topic')!,
      rejectedTopic: get('rejected-topic')!,
      group,
      metricsPort: parseNumber(get('metrics-port')!, 'metrics-port', PORT_OR_ANY_RULE, CMD),
      configFile: get('config') ?? null,
      checkpointMs: wholeNumber(get('checkpoint-ms')!, 'checkpoint-ms', 10),
      checkpointReadings: wholeNumber(get('checkpoint-readings')!, 'checkpoint-readings', 1),
      maxSensors: wholeNumber(get('max-sensors')!, 'max-sensors', 1),
      startFrom,
      warmStart,
      sessionTimeoutMs: wholeNumber(get('session-timeout-ms')!, 'session-timeout-ms', 1000),
      logLevel,
      kafka,
      redis,
    },
  };
}
