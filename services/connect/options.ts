/**
 * The connection options every command that talks to Kafka or Redis accepts, with one environment
 * variable each (services/config/env.ts), and the code that turns them into connection settings.
 * Commands never declare these options themselves: they spread KAFKA_OPTIONS / REDIS_OPTIONS into
 * their own option list and call readKafkaSettings / readRedisSettings, so run, inspect, board,
 * alerts, simulate and replay cannot drift apart. The README's connection table is checked against
 * these specs by test/unit/connect/options-table.test.ts.
 *
 * Secrets (SASL and Redis passwords) come only from the environment or a file, never from a flag,
 * so they never show in `ps` output or shell history.
 */
import type { ParseArgsConfig } from 'node:util';
import { StreamfenceError } from '../../libs/errors/index.js';
import { ENV } from '../config/env.js';
import { readSecretFile } from './files.js';
import { parseRedisUrl, redisAddresses, type RedisTarget } from './redis-url.js';

/** One command-line option: its environment variable, default and help line. */
export interface OptionSpec {
  env?: string;
  def?: string;
  help: string;
  type?: 'boolean';
}

export const SASL_MECHANISMS = ['plain', 'scram-sha-256', 'scram-sha-512'] as const;
export type SaslMechanism = (typeof SASL_MECHANISMS)[number];

export const KAFKA_OPTIONS = {
  brokers: { env: ENV.brokers, help: 'Kafka bootstrap servers, comma-separated host:port' },
  'kafka-tls': {
    env: ENV.kafkaTls,
    type: 'boolean',
    help: 'connect to Kafka over TLS (on when a CA is given)',
  },
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
} as const satisfies Record<string, OptionSpec>;

export const REDIS_OPTIONS = {
  redis: {
    env: ENV.redisUrl,
    help: 'Redis URL (redis://host:port, rediss:// for TLS; redis+cluster://host:port,host:port for a Redis Cluster)',
  },
  'redis-username': { env: ENV.redisUsername, help: 'Redis ACL user' },
  'redis-password-file': {
    env: ENV.redisPasswordFile,
    help: `file holding the Redis password (or set ${ENV.redisPassword})`,
  },
  'redis-ca-file': { env: ENV.redisCaFile, help: 'PEM CA bundle to trust for rediss://' },
  'redis-cert-file': { env: ENV.redisCertFile, help: 'PEM client certificate for Redis mutual TLS' },
  'redis-key-file': { env: ENV.redisKeyFile, help: 'PEM client key for Redis mutual TLS' },
} as const satisfies Record<string, OptionSpec>;

/** Environment variables that hold a secret themselves (never a flag). */
export const SECRET_ENV = [ENV.kafkaSaslPassword, ENV.redisPassword] as const;

/** How to reach Kafka: brokers plus TLS and SASL. Only `brokers` is needed for a plain cluster. */
export interface KafkaSettings {
  brokers: string[];
  tls?: boolean;
  caFile?: string;
  certFile?: string;
  keyFile?: string;
  sasl?: { mechanism: SaslMechanism; username: string; password: string };
}

/**
 * How to reach Redis: a redis://, rediss://, redis+cluster:// or rediss+cluster:// URL (see
 * redis-url.ts) plus ACL user, password and TLS files.
 */
export interface RedisSettings {
  url: string;
  username?: string;
  password?: string;
  caFile?: string;
  certFile?: string;
  keyFile?: string;
}

/** Parsed command-line values, as node:util parseArgs returns them. */
export type OptionValues = Record<string, string | boolean | (string | boolean)[] | undefined>;

/** node:util parseArgs option declarations for a set of specs. */
export function parseArgsOptions(specs: Record<string, OptionSpec>): NonNullable<ParseArgsConfig['options']> {
  const out: NonNullable<ParseArgsConfig['options']> = {};
  for (const [name, s] of Object.entries(specs)) out[name] = { type: s.type ?? 'string' };
  return out;
}

/** Help lines for a set of specs: flag, text, default and variable. */
export function optionsHelp(specs: Record<string, OptionSpec>): string {
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

/** The help block every connecting command prints, so their texts agree. */
export function connectionHelp(needs: { kafka?: boolean; redis?: boolean }): string {
  const parts: string[] = [];
  if (needs.kafka) parts.push('Kafka connection:', optionsHelp(KAFKA_OPTIONS));
  if (needs.redis) parts.push('Redis connection:', optionsHelp(REDIS_OPTIONS));
  parts.push(
    `Passwords come from ${ENV.kafkaSaslPassword} / ${ENV.redisPassword} or the *-password-file options, never from flags.`,
  );
  return parts.join('\n');
}

const invalid = (msg: string, cmd: string) =>
  new StreamfenceError('ARGS_INVALID', `${msg} (see "streamfence ${cmd} --help")`);

/** Reads a flag, else its variable; empty values count as absent. */
function reader(
  values: OptionValues,
  env: NodeJS.ProcessEnv,
  specs: Record<string, OptionSpec>,
  cmd: string,
) {
  const get = (name: string): string | undefined => {
    const v = values[name];
    if (Array.isArray(v) || typeof v === 'boolean') throw invalid(`--${name} takes one value`, cmd);
    if (typeof v === 'string') {
      if (v === '') throw invalid(`--${name} needs a non-empty value`, cmd);
      return v;
    }
    const e = specs[name].env;
    const fromEnv = e === undefined ? undefined : env[e];
    return fromEnv === undefined || fromEnv === '' ? undefined : fromEnv;
  };
  /** A switch: the flag, or its variable as true/false (anything else is refused). */
  const flag = (name: string): boolean | undefined => {
    if (values[name] === true) return true;
    const e = specs[name].env;
    const raw = e === undefined ? '' : (env[e] ?? '');
    if (raw === '') return undefined;
    if (/^(1|true|yes|on)$/i.test(raw)) return true;
    if (/^(0|false|no|off)$/i.test(raw)) return false;
    throw invalid(`${e} must be true or false, got "${raw}"`, cmd);
  };
  return { get, flag };
}

/** The password from a file (flag or variable) or from the variable holding it; both set is refused. */
function password(
  file: string | undefined,
  fileVar: string,
  direct: string | undefined,
  directVar: string,
  what: string,
  cmd: string,
): string | undefined {
  if (file !== undefined && direct !== undefined && direct !== '')
    throw invalid(`both ${directVar} and a ${what} file (${fileVar}) are set; keep one`, cmd);
  if (file !== undefined) return readSecretFile(file, what);
  return direct === '' ? undefined : direct;
}

/**
 * Kafka settings from the connection options. `brokers` overrides the option (the brokers of a
 * kafka://HOST:PORT/TOPIC address); `defaultBrokers` is used when neither is given, else the
 * brokers are required.
 */
export function readKafkaSettings(
  values: OptionValues,
  env: NodeJS.ProcessEnv,
  o: { cmd: string; brokers?: string[]; defaultBrokers?: string },
): KafkaSettings {
  const { get, flag } = reader(values, env, KAFKA_OPTIONS, o.cmd);
  let brokers = o.brokers;
  if (brokers === undefined) {
    const raw = get('brokers') ?? o.defaultBrokers;
    if (raw === undefined)
      throw invalid(`no Kafka brokers: pass --brokers host:port[,host:port] or set ${ENV.brokers}`, o.cmd);
    brokers = raw
      .split(',')
      .map((b) => b.trim())
      .filter(Boolean);
    if (brokers.length === 0) throw invalid(`--brokers is empty; give host:port[,host:port]`, o.cmd);
  }
  for (const b of brokers)
    if (!/^[^\s:/]+:\d{1,5}$/.test(b)) throw invalid(`broker "${b}" must be host:port`, o.cmd);

  const caFile = get('kafka-ca-file');
  const certFile = get('kafka-cert-file');
  const keyFile = get('kafka-key-file');
  const tlsFlag = flag('kafka-tls');
  const anyFile = caFile ?? certFile ?? keyFile;
  if (tlsFlag === false && anyFile !== undefined)
    throw invalid(
      `${ENV.kafkaTls} is false but a Kafka TLS file is given (${anyFile}); drop one of them`,
      o.cmd,
    );
  if ((certFile === undefined) !== (keyFile === undefined))
    throw invalid('Kafka mutual TLS needs both --kafka-cert-file and --kafka-key-file', o.cmd);

  const mechRaw = get('kafka-sasl-mechanism');
  const username = get('kafka-sasl-username');
  const pwFile = get('kafka-sasl-password-file');
  let sasl: KafkaSettings['sasl'];
  if (mechRaw === undefined) {
    if (username !== undefined || pwFile !== undefined)
      throw invalid(
        `a SASL user or password file is given but no mechanism: set --kafka-sasl-mechanism (${SASL_MECHANISMS.join(', ')})`,
        o.cmd,
      );
  } else {
    const mechanism = mechRaw.toLowerCase() as SaslMechanism;
    if (!SASL_MECHANISMS.includes(mechanism))
      throw invalid(
        `--kafka-sasl-mechanism must be one of ${SASL_MECHANISMS.join(', ')}, got "${mechRaw}"`,
        o.cmd,
      );
    if (username === undefined)
      throw invalid(`SASL needs a user name: --kafka-sasl-username or ${ENV.kafkaSaslUsername}`, o.cmd);
    const pw = password(
      pwFile,
      ENV.kafkaSaslPasswordFile,
      env[ENV.kafkaSaslPassword],
      ENV.kafkaSaslPassword,
      'SASL password',
      o.cmd,
    );
    if (pw === undefined)
      throw invalid(
        `SASL needs a password: set ${ENV.kafkaSaslPassword} or pass --kafka-sasl-password-file`,
        o.cmd,
      );
    sasl = { mechanism, username, password: pw };
  }
  return { brokers, tls: tlsFlag === true || anyFile !== undefined, caFile, certFile, keyFile, sasl };
}

/**
 * Redis settings from the connection options; undefined when no URL is given and `required` is
 * false. A password written into a --redis flag is refused (it would show in `ps`); one in the
 * STREAMFENCE_REDIS_URL variable is accepted.
 */
export function readRedisSettings(
  values: OptionValues,
  env: NodeJS.ProcessEnv,
  o: { cmd: string; required: true; why?: string },
): RedisSettings;
export function readRedisSettings(
  values: OptionValues,
  env: NodeJS.ProcessEnv,
  o: { cmd: string; required: false; why?: string },
): RedisSettings | undefined;
export function readRedisSettings(
  values: OptionValues,
  env: NodeJS.ProcessEnv,
  o: { cmd: string; required: boolean; why?: string },
): RedisSettings | undefined {
  const { get } = reader(values, env, REDIS_OPTIONS, o.cmd);
  const url = get('redis');
  if (url === undefined) {
    if (!o.required) return undefined;
    throw invalid(
      `no Redis: pass --redis redis://host:port or set ${ENV.redisUrl}${o.why ? ` (${o.why})` : ''}`,
      o.cmd,
    );
  }
  let parsed: RedisTarget;
  try {
    parsed = parseRedisUrl(url);
  } catch (e) {
    throw invalid((e as Error).message, o.cmd);
  }
  if (typeof values.redis === 'string' && parsed.password !== undefined)
    throw invalid(
      `do not put the Redis password in --redis (it shows in ps); set ${ENV.redisPassword} or --redis-password-file`,
      o.cmd,
    );
  const caFile = get('redis-ca-file');
  const certFile = get('redis-cert-file');
  const keyFile = get('redis-key-file');
  const anyFile = caFile ?? certFile ?? keyFile;
  if (!parsed.tls && anyFile !== undefined)
    throw invalid(
      parsed.cluster
        ? `a Redis TLS file is given (${anyFile}) but the URL is redis+cluster://; use rediss+cluster:// for TLS`
        : `a Redis TLS file is given (${anyFile}) but the URL is redis://; use rediss:// for TLS`,
      o.cmd,
    );
  if ((certFile === undefined) !== (keyFile === undefined))
    throw invalid('Redis mutual TLS needs both --redis-cert-file and --redis-key-file', o.cmd);
  const pw = password(
    get('redis-password-file'),
    ENV.redisPasswordFile,
    env[ENV.redisPassword],
    ENV.redisPassword,
    'Redis password',
    o.cmd,
  );
  return { url, username: get('redis-username'), password: pw, caFile, certFile, keyFile };
}

/** What may be logged about a Kafka connection: addresses and names, never a secret. */
export function describeKafka(s: KafkaSettings): Record<string, unknown> {
  return {
    brokers: s.brokers,
    tls: s.tls === true,
    sasl: s.sasl ? s.sasl.mechanism : null,
    user: s.sasl ? s.sasl.username : null,
  };
}

/** What may be logged about a Redis connection: host:port (each seed of a cluster), TLS and user, never a secret. */
export function describeRedis(s: RedisSettings): Record<string, unknown> {
  const t = parseRedisUrl(s.url);
  return {
    redis: redisAddresses(t),
    tls: t.tls,
    ...(t.cluster ? { cluster: true } : {}),
    user: s.username ?? t.username ?? null,
  };
}

/** The parsed URL of the settings (validated by readRedisSettings, so it does not throw there). */
export function redisTarget(s: RedisSettings): RedisTarget {
  return parseRedisUrl(s.url);
}
