/**
 * The kafkajs client of every command, from KafkaSettings: brokers, optional TLS (CA, client
 * certificate) and SASL (PLAIN, SCRAM-SHA-256, SCRAM-SHA-512). kafkajs log lines go to our pino
 * logger at debug level only (one JSON object per line, secrets redacted) or nowhere: a command
 * reports failures through its own one-line messages (services/connect/outage.ts), never through
 * kafkajs' text, which repeats every retry in several JSON lines.
 */
import net from 'node:net';
import tls from 'node:tls';
import {
  Kafka,
  logLevel,
  type ISocketFactory,
  type KafkaConfig,
  type SASLOptions,
  type LogEntry,
} from 'kafkajs';
import { noteKafkaAnswered } from './answered.js';
import { readPem } from './files.js';
import type { KafkaSettings } from './options.js';
import type { Logger } from '../log.js';

export interface KafkaClientOptions {
  clientId: string;
  /** Where kafkajs warnings and errors go; without one kafkajs is silent. */
  log?: Logger;
  /**
   * Told about every error kafkajs reports (it retries them itself: failed requests, lost group
   * membership), so a long-running caller can word Kafka trouble it never sees as an exception.
   */
  onError?: (entry: LogEntry) => void;
  /** kafkajs retries of one request before it fails (default 8). */
  retries?: number;
}

/** The kafkajs configuration for the settings (exported for tests). */
export function kafkaConfig(s: KafkaSettings, o: KafkaClientOptions): KafkaConfig {
  const { log, onError } = o;
  const cfg: KafkaConfig = {
    clientId: o.clientId,
    brokers: s.brokers,
    connectionTimeout: 5_000,
    requestTimeout: 30_000,
    retry: { initialRetryTime: 200, maxRetryTime: 5_000, retries: o.retries ?? 8 },
    // kafkajs logs at info about routine group events; keep only warnings and errors.
    logLevel: log || onError ? logLevel.WARN : logLevel.NOTHING,
    logCreator: () => (entry: LogEntry) => {
      if (entry.level === logLevel.ERROR) onError?.(entry);
      if (!log) return;
      // The library's own words stay at debug: the command logs one line per retry of its own.
      const { message, ...rest } = entry.log;
      log.debug({ kafkajs: entry.namespace, ...pickSafe(rest) }, String(message));
    },
  };
  cfg.socketFactory = answerNotingSocketFactory;
  if (s.tls || s.caFile || s.certFile) {
    cfg.ssl = {
      rejectUnauthorized: true,
      ca: s.caFile ? [readPem('Kafka', s.caFile, 'CA')] : undefined,
      cert: s.certFile ? readPem('Kafka', s.certFile, 'certificate') : undefined,
      key: s.keyFile ? readPem('Kafka', s.keyFile, 'key') : undefined,
    };
  }
  if (s.sasl) {
    const { mechanism, username, password } = s.sasl;
    cfg.sasl = { mechanism, username, password } as SASLOptions;
  }
  return cfg;
}

/**
 * kafkajs' own socket factory (net or tls, keep-alive), plus a note of each broker address that
 * answers with a Kafka response: a TLS listener fed plain text never does, so a broker that had
 * answered and then closes is a connection lost, not a TLS hint (see answered.ts).
 */
const answerNotingSocketFactory: ISocketFactory = ({ host, port, ssl, onConnect }) => {
  const socket = ssl
    ? tls.connect({ host, port, ...(net.isIP(host) ? {} : { servername: host }), ...ssl }, onConnect)
    : net.connect({ host, port }, onConnect);
  socket.setKeepAlive(true, 60_000);
  // A Kafka response starts with its 4-byte size, whose first byte is 0 below 16 MiB; a TLS
  // listener fed plain text may send a TLS alert record (first byte 0x15) before it closes.
  socket.once('data', (chunk: Buffer) => {
    if (chunk.length > 0 && chunk[0] === 0) noteKafkaAnswered(`${host}:${port}`);
  });
  return socket;
};

/** kafkajs log extras are plain values (broker, groupId, error text); keep only scalars. */
function pickSafe(o: Record<string, unknown>): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(o)) {
    if (k === 'timestamp' || k === 'logger') continue;
    if (v === null || ['string', 'number', 'boolean'].includes(typeof v)) out[k] = v;
  }
  return out;
}

/** The one way a command gets a kafkajs client. */
export function buildKafka(s: KafkaSettings, o: KafkaClientOptions): Kafka {
  return new Kafka(kafkaConfig(s, o));
}
