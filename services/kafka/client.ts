/**
 * kafkajs client from our options: brokers, optional TLS (CA, client certificate) and SASL
 * (PLAIN, SCRAM-SHA-256, SCRAM-SHA-512). kafkajs log lines are forwarded to our pino logger so
 * every line on stderr is one JSON object; kafkajs never sees or logs the password in clear.
 */
import { Kafka, logLevel, type KafkaConfig, type SASLOptions, type LogEntry } from 'kafkajs';
import { readPem } from '../tls-files.js';
import type { Logger } from '../log.js';

export const SASL_MECHANISMS = ['plain', 'scram-sha-256', 'scram-sha-512'] as const;
export type SaslMechanism = (typeof SASL_MECHANISMS)[number];

export interface KafkaConnectOptions {
  clientId: string;
  brokers: string[];
  tls?: boolean;
  caFile?: string;
  certFile?: string;
  keyFile?: string;
  sasl?: { mechanism: SaslMechanism; username: string; password: string };
}

const LEVELS: Record<number, 'error' | 'warn' | 'info' | 'debug'> = {
  [logLevel.ERROR]: 'error',
  [logLevel.WARN]: 'warn',
  [logLevel.INFO]: 'info',
  [logLevel.DEBUG]: 'debug',
};

/**
 * `onError` is told about every error kafkajs reports (it retries them itself: failed requests,
 * lost group membership), so the caller can count Kafka trouble it never sees as an exception.
 */
export function kafkaConfig(o: KafkaConnectOptions, log: Logger, onError?: () => void): KafkaConfig {
  const cfg: KafkaConfig = {
    clientId: o.clientId,
    brokers: o.brokers,
    connectionTimeout: 5_000,
    requestTimeout: 30_000,
    retry: { initialRetryTime: 200, maxRetryTime: 5_000, retries: 8 },
    // kafkajs logs at info about routine group events; keep them at debug in ours except warnings.
    logLevel: logLevel.WARN,
    logCreator: () => (entry: LogEntry) => {
      const level = LEVELS[entry.level] ?? 'info';
      if (entry.level === logLevel.ERROR) onError?.();
      const { message, ...rest } = entry.log;
      log[level]({ kafkajs: entry.namespace, ...pickSafe(rest) }, String(message));
    },
  };
  if (o.tls || o.caFile || o.certFile) {
    cfg.ssl = {
      rejectUnauthorized: true,
      ca: o.caFile ? [readPem('Kafka', o.caFile, 'CA')] : undefined,
      cert: o.certFile ? readPem('Kafka', o.certFile, 'certificate') : undefined,
      key: o.keyFile ? readPem('Kafka', o.keyFile, 'key') : undefined,
    };
  }
  if (o.sasl) {
    const { mechanism, username, password } = o.sasl;
    cfg.sasl = { mechanism, username, password } as SASLOptions;
  }
  return cfg;
}

/** kafkajs log extras are plain values (broker, groupId, error text); keep only scalars. */
function pickSafe(o: Record<string, unknown>): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(o)) {
    if (k === 'timestamp' || k === 'logger') continue;
    if (v === null || ['string', 'number', 'boolean'].includes(typeof v)) out[k] = v;
  }
  return out;
}

export function createKafka(o: KafkaConnectOptions, log: Logger, onError?: () => void): Kafka {
  return new Kafka(kafkaConfig(o, log, onError));
}
