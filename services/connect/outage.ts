/**
 * A failed call to Kafka or Redis in a long-running command (`run`, `board`, following `alerts`),
 * in words: the one line naming the address and the cause that every retry logs
 * (`redis 127.0.0.1:6399: connection refused; retrying in 5 s`), a small fixed cause label for
 * `streamfence_backoff_total`, and whether the failure is a refusal waiting cannot fix (a wrong
 * password, an untrusted certificate, an ACL denial), which ends a command that has not started
 * yet with exit 2. Built on the refusal and network wording of refusals.ts, so one-shot and
 * long-running commands name the same failure the same way.
 */
import { StreamfenceError } from '../../libs/errors/index.js';
import type { KafkaSettings, RedisSettings } from './options.js';
import { parseRedisUrl, redisAddresses } from './redis-url.js';
import {
  kafkaConnectionLost,
  kafkaRefusal,
  networkCause,
  redisConnectionLost,
  redisRefusal,
  unreachableLine,
} from './refusals.js';
import { kafkaAnswered, redisAnswered } from './answered.js';

/** The label values of `cause` on streamfence_backoff_total (a fixed, small set). */
export const OUTAGE_CAUSES = [
  'connection',
  'disconnected',
  'timeout',
  'auth',
  'tls',
  'acl',
  'other',
] as const;
/** One of OUTAGE_CAUSES. */
export type OutageCause = (typeof OUTAGE_CAUSES)[number];

/** One failed attempt, described. */
export interface Outage {
  dependency: 'kafka' | 'redis';
  cause: OutageCause;
  /** "redis 127.0.0.1:6399: connection refused" (no secret, no library text) */
  line: string;
  /** Set when waiting cannot fix it (auth, certificate, ACL): a command still starting ends with it. */
  refusal: StreamfenceError | null;
}

const REFUSAL_CAUSE: Partial<Record<string, OutageCause>> = {
  AUTH_FAILED: 'auth',
  NOT_AUTHORISED: 'acl',
  TLS_FAILED: 'tls',
};

function fromRefusal(dependency: 'kafka' | 'redis', refusal: StreamfenceError): Outage {
  // "closed the connection" (plain text to a TLS port, or a broker never heard from yet) may be an outage
  // that ends: it is retried, worded as the hint it is. A failed handshake, a wrong password or
  // an ACL denial is not.
  const final = !(refusal.code === 'TLS_FAILED' && /closed the connection/.test(refusal.message));
  return {
    dependency,
    cause: REFUSAL_CAUSE[refusal.code] ?? 'other',
    line: refusal.message,
    refusal: final ? refusal : null,
  };
}

function networkOutage(dependency: 'kafka' | 'redis', err: unknown, fallbackAddress: string): Outage | null {
  const n = networkCause(err);
  if (n === null) return null;
  return {
    dependency,
    cause: /timed out/.test(n.cause) ? 'timeout' : 'connection',
    line: unreachableLine(dependency, n.address ?? fallbackAddress, n.cause),
    refusal: null,
  };
}

/** The innermost message's first clause, without library class names (for the last-resort line). */
function shortReason(err: unknown): string {
  let e = err as { message?: unknown; cause?: unknown; originalError?: unknown } | undefined;
  let text = String(e?.message ?? err);
  for (let i = 0; e && i < 6; i++) {
    if (e.message !== undefined) text = String(e.message);
    e = (e.originalError ?? e.cause) as typeof e;
  }
  return text
    .split('\n')[0]
    .replace(/^KafkaJS\w+:\s*/, '')
    .slice(0, 160);
}

/** The broker's authorization answers, by the words kafkajs gives them (its protocol error table). */
const DENIALS: [RegExp, string][] = [
  [/not authorized to access group|group authorization failed/i, 'GROUP_AUTHORIZATION_FAILED'],
  [/not authorized to access topics|topic authorization failed/i, 'TOPIC_AUTHORIZATION_FAILED'],
  [/cluster authorization failed/i, 'CLUSTER_AUTHORIZATION_FAILED'],
  [/transactional id authorization failed/i, 'TRANSACTIONAL_ID_AUTHORIZATION_FAILED'],
];

/**
 * The failure a kafkajs error log entry reports, as an error kafkaOutage can word. A connection
 * failure keeps its message; a request the broker answered with an error ("Response Fetch(…)")
 * becomes the broker's own error, typed when it is an ACL denial, so the retry line says "not
 * authorised" instead of naming a protocol request.
 */
export function kafkaLogError(log: { message?: unknown; error?: unknown }): Error {
  const message = String(log.message ?? '');
  if (!message.startsWith('Response ') || typeof log.error !== 'string') return new Error(message);
  const denied = DENIALS.find(([pattern]) => pattern.test(log.error as string));
  return Object.assign(new Error(log.error), denied ? { type: denied[1] } : {});
}

/** A failed Kafka call (`what`: the operation, for ACL wording). */
export function kafkaOutage(
  err: unknown,
  s: KafkaSettings,
  what = 'connect',
  answered: ReadonlySet<string> = kafkaAnswered,
): Outage {
  const refusal = kafkaRefusal(err, s, what, answered);
  if (refusal !== null) return fromRefusal('kafka', refusal);
  const at = s.brokers.join(',');
  const network = networkOutage('kafka', err, at);
  if (network !== null) return network;
  // A broker that had answered and then closed the connection went away (not a TLS listener).
  const lost = kafkaConnectionLost(err, s, answered);
  if (lost !== null)
    return {
      dependency: 'kafka',
      cause: 'disconnected',
      line: unreachableLine('kafka', lost, 'connection lost'),
      refusal: null,
    };
  const reason = shortReason(err);
  const timeout = /timed? ?out/i.test(reason);
  return {
    dependency: 'kafka',
    cause: timeout ? 'timeout' : 'other',
    line: timeout ? unreachableLine('kafka', at, 'no answer (timed out)') : `kafka ${at}: ${reason}`,
    refusal: null,
  };
}

/**
 * A failed Redis call. ioredis rejects a command with "Reached the max retries per request limit"
 * or "Connection is closed"; the real cause (ECONNREFUSED, WRONGPASS, a certificate) arrived
 * earlier as the client's 'error' event: pass it as `socketError` (see RedisErrorWatch). Like
 * Kafka's: a Redis that had been ready for this process and then drops the connection is a
 * connection lost (`disconnected`), a refused reconnect is "connection refused"; the TLS hint is
 * only for an address that never answered.
 */
export function redisOutage(
  err: unknown,
  s: RedisSettings,
  socketError: unknown = null,
  answered: ReadonlySet<string> = redisAnswered,
): Outage {
  const at = redisAddresses(parseRedisUrl(s.url));
  const candidates = socketError === null ? [err] : [socketError, err];
  for (const candidate of candidates) {
    const refusal = redisRefusal(candidate, s, answered);
    if (refusal !== null) return fromRefusal('redis', refusal);
    const network = networkOutage('redis', candidate, at);
    if (network !== null) return network;
  }
  // Before a timeout: a reset seen on the socket is why the command got no answer.
  if (candidates.some((candidate) => redisConnectionLost(candidate, s, answered) !== null))
    return redisLine('disconnected', at, 'connection lost');
  const reason = shortReason(err);
  if (/timed? ?out/i.test(reason)) return redisLine('timeout', at, 'no answer (timed out)');
  // A cluster whose primary for the key's slot is gone until its replica is promoted.
  if (/CLUSTERDOWN|TRYAGAIN|Too many Cluster redirections/i.test(reason))
    return redisLine('connection', at, 'cluster slot without a primary (failing over)');
  if (
    /max retries per request|Connection is closed|Stream isn't writeable|None of startup nodes|Failed to refresh slots cache/i.test(
      reason,
    )
  )
    // Never ready for this process: there was no connection to lose.
    return redisLine('connection', at, 'no connection');
  return { dependency: 'redis', cause: 'other', line: `redis ${at}: ${reason}`, refusal: null };
}

function redisLine(cause: OutageCause, at: string, words: string): Outage {
  return { dependency: 'redis', cause, line: unreachableLine('redis', at, words), refusal: null };
}

/**
 * "…; retrying in 5 s" (tenths below 10 s: the first retries come after 0.1 s, 0.2 s, …); with a
 * null delay (a retry the Kafka client times itself) just "…; retrying".
 */
export function retryLine(outage: Outage, delayMs: number | null): string {
  if (delayMs === null) return `${outage.line}; retrying`;
  const seconds =
    delayMs >= 10_000 ? String(Math.round(delayMs / 1000)) : String(Math.round(delayMs / 100) / 10);
  return `${outage.line}; retrying in ${seconds} s`;
}

/**
 * Remembers the last 'error' event of an ioredis client (the socket's own cause), forgotten once
 * the client is ready again, so a failed command can be worded by what really went wrong.
 */
export class RedisErrorWatch {
  private last: unknown = null;

  constructor(client: { on(event: string, listener: (arg: unknown) => void): unknown }) {
    client.on('error', (e) => {
      this.last = e;
    });
    // A cluster client reports a node's socket error as 'node error' (its 'error' is cluster-wide).
    client.on('node error', (e) => {
      this.last = e;
    });
    client.on('ready', () => {
      this.last = null;
    });
  }

  /** The socket error seen since the client was last ready, or null. */
  get lastError(): unknown {
    return this.last;
  }
}
