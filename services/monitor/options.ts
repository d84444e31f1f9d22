/**
 * `streamfence run` options: each flag has an environment variable (services/config/env.ts); the
 * flag wins. Secrets (SASL and Redis passwords) come from the environment or a file, never a flag,
 * so they do not show up in `ps` output or shell history.
 */
import { readFileSync } from 'node:fs';
import { parseArgs } from 'node:util';
import { StreamfenceError } from '../../libs/errors/index.js';
import { DEFAULT_MAX_SENSORS } from '../../libs/engine/sensor-budget.js';
import { ENV, DEFAULT_METRICS_PORT } from '../config/env.js';
import { SASL_MECHANISMS, type SaslMechanism } from '../kafka/client.js';
import { LOG_LEVELS, type LogLevel } from '../log.js';

export interface MonitorOptions {
  brokers: string[];
  redisUrl: string;
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
  sessionTimeoutMs: number;
  logLevel: LogLevel;
  kafka: {
    tls: boolean;
    caFile?: string;
    certFile?: string;
    keyFile?: string;
    sasl?: { mechanism: SaslMechanism; username: string; password: string };
  };
  redis: { username?: string; password?: string; caFile?: string; certFile?: string; keyFile?: string };
}

type Spec = { env?: string; def?: string; help: string; type?: 'boolean' };

export const RUN_OPTIONS: Record<string, Spec> = {
  brokers: { env: ENV.brokers, help: 'Kafka bootstrap servers, comma-separated host:port' },
  redis: { env: ENV.redisUrl, help: 'Redis URL for detector state (redis://host:port, rediss:// for TLS)' },
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
    help: 'port of /metrics, /healthz, /readyz (0 = any free port, logged)',
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
  'session-timeout-ms': {
    env: ENV.kafkaSessionTimeoutMs,
    def: '30000',
    help: 'consumer group session timeout: a crashed monitor keeps its partitions this long (ms)',
  },
  'log-level': { env: ENV.logLevel, def: 'info', help: `log level: ${LOG_LEVELS.join(', ')}` },
  'kafka-tls': { env: ENV.kafkaTls, type: 'boolean', help: 'connect to Kafka over TLS' },
  'kafka-ca-file': { env: ENV.kafkaCaFile, help: 'PEM CA bundle to trust for Kafka TLS' },
  'kafka-cert-file': { env: ENV.kafkaCertFile, help: 'PEM client certificate for Kafka mutual TLS' },
  'kafka-key-file': { env: ENV.kafkaKeyFile, help: 'PEM client key for Kafka mutual TLS' },
  'kafka-sasl-mechanism': {
    env: ENV.kafkaSaslMechanism,
    help: `SASL mechanism: ${SASL_MECHANISMS.join(', ')}`,
  },
  'kafka-sasl-username': { env: ENV.kafkaSaslUsername, help: 'SASL user name' },
  'kafka-sasl-password-file': {
    env: ENV.kafkaSaslPasswordFile,
    help: `file holding the SASL password (or set ${ENV.kafkaSaslPassword})`,
  },
  'redis-username': { env: ENV.redisUsername, help: 'Redis ACL user' },
  'redis-password-file': {
    env: ENV.redisPasswordFile,
    help: `file holding the Redis password (or set ${ENV.redisPassword})`,
  },
  'redis-ca-file': { env: ENV.redisCaFile, help: 'PEM CA bundle to trust for rediss://' },
  'redis-cert-file': { env: ENV.redisCertFile, help: 'PEM client certificate for Redis TLS' },
  'redis-key-file': { env: ENV.redisKeyFile, help: 'PEM client key for Redis TLS' },
};

export function optionsHelp(specs: Record<string, Spec>): string {
  return Object.entries(specs)
    .map(([name, s]) => {
      const flag = s.type === 'boolean' ? `--${name}` : `--${name} <value>`;
      const extra = [s.def !== undefined ? `default ${s.def}` : '', s.env ? `env ${s.env}` : '']
        .filter(Boolean)
        .join('; ');
      return `  ${flag.padEnd(34)} ${s.help}${extra ? ` (${extra})` : ''}`;
    })
    .join('\n');
}

const invalid = (msg: string) => new StreamfenceError('ARGS_INVALID', msg);

function readSecretFile(file: string, what: string): string {
  try {
    return readFileSync(file, 'utf8').replace(/\r?\n$/, '');
  } catch (e) {
    throw invalid(`cannot read the ${what} file ${file}: ${(e as Error).message}`);
  }
}

function positiveInt(raw: string, name: string, min: number): number {
  if (!/^\d+$/.test(raw) || Number(raw) < min)
    throw invalid(`--${name} must be a whole number >= ${min}, got "${raw}"`);
  return Number(raw);
}

export function parseRunOptions(
  argv: string[],
  env: NodeJS.ProcessEnv,
): { help: true } | { help: false; opts: MonitorOptions } {
  const options: Record<string, { type: 'string' | 'boolean' }> = { help: { type: 'boolean' } };
  for (const [name, s] of Object.entries(RUN_OPTIONS)) options[name] = { type: s.type ?? 'string' };
  let values: Record<string, string | boolean | undefined>;
  try {
    ({ values } = parseArgs({ args: argv, options, strict: true, allowPositionals: false }));
  } catch (e) {
    throw invalid(`${(e as Error).message}. Run "streamfence run --help" for the options.`);
  }
  if (values.help) return { help: true };

  const get = (name: string): string | undefined => {
    const v = values[name];
    if (typeof v === 'string') return v;
    const s = RUN_OPTIONS[name];
    const fromEnv = s.env ? env[s.env] : undefined;
    if (fromEnv !== undefined && fromEnv !== '') return fromEnv;
    return s.def;
  };
  const flag = (name: string): boolean => {
    if (values[name] === true) return true;
    const e = RUN_OPTIONS[name].env;
    return e !== undefined && /^(1|true|yes)$/i.test(env[e] ?? '');
  };

  const brokersRaw = get('brokers');
  if (!brokersRaw)
    throw invalid(`no Kafka brokers: pass --brokers host:port[,host:port] or set ${ENV.brokers}`);
  const brokers = brokersRaw
    .split(',')
    .map((b) => b.trim())
    .filter(Boolean);
  for (const b of brokers) if (!/^[^\s:/]+:\d+$/.test(b)) throw invalid(`broker "${b}" must be host:port`);
  const redisUrl = get('redis');
  if (!redisUrl) throw invalid(`no Redis: pass --redis redis://host:port or set ${ENV.redisUrl}`);

  const logLevel = get('log-level') as LogLevel;
  if (!LOG_LEVELS.includes(logLevel)) throw invalid(`--log-level must be one of ${LOG_LEVELS.join(', ')}`);

  let sasl: MonitorOptions['kafka']['sasl'];
  const mech = get('kafka-sasl-mechanism');
  if (mech !== undefined) {
    const m = mech.toLowerCase() as SaslMechanism;
    if (!SASL_MECHANISMS.includes(m))
      throw invalid(`--kafka-sasl-mechanism must be one of ${SASL_MECHANISMS.join(', ')}`);
    const username = get('kafka-sasl-username');
    if (!username) throw invalid(`SASL needs a user name: --kafka-sasl-username or ${ENV.kafkaSaslUsername}`);
    const file = get('kafka-sasl-password-file');
    const password = file ? readSecretFile(file, 'SASL password') : env[ENV.kafkaSaslPassword];
    if (!password) {
      throw invalid(`SASL needs a password: set ${ENV.kafkaSaslPassword} or pass --kafka-sasl-password-file`);
    }
    sasl = { mechanism: m, username, password };
  }
  const redisPwFile = get('redis-password-file');
  const redisPassword = redisPwFile
    ? readSecretFile(redisPwFile, 'Redis password')
    : env[ENV.redisPassword] || undefined;

  const group = get('group')!;
  const inputTopic = get('input-topic')!;
  for (const [n, v] of [
    ['group', group],
    ['input-topic', inputTopic],
  ]) {
    // ':' separates the parts of our Redis keys; Kafka topic names never contain it.
    if (!/^[A-Za-z0-9._-]+$/.test(v))
      throw invalid(`--${n} "${v}" may contain only letters, digits, '.', '_' and '-'`);
  }

  return {
    help: false,
    opts: {
      brokers,
      redisUrl,
      statePrefix: get('state-prefix')!,
      inputTopic,
      alertTopic: get('alert-topic')!,
      rejectedTopic: get('rejected-topic')!,
      group,
      metricsPort: positiveInt(get('metrics-port')!, 'metrics-port', 0),
      configFile: get('config') ?? null,
      checkpointMs: positiveInt(get('checkpoint-ms')!, 'checkpoint-ms', 10),
      checkpointReadings: positiveInt(get('checkpoint-readings')!, 'checkpoint-readings', 1),
      maxSensors: positiveInt(get('max-sensors')!, 'max-sensors', 1),
      sessionTimeoutMs: positiveInt(get('session-timeout-ms')!, 'session-timeout-ms', 1000),
      logLevel,
      kafka: {
        tls: flag('kafka-tls'),
        caFile: get('kafka-ca-file'),
        certFile: get('kafka-cert-file'),
        keyFile: get('kafka-key-file'),
        sasl,
      },
      redis: {
        username: get('redis-username'),
        password: redisPassword,
        caFile: get('redis-ca-file'),
        certFile: get('redis-cert-file'),
        keyFile: get('redis-key-file'),
      },
    },
  };
}
