/**
 * One-line reasons for a refused connection: a wrong password, an untrusted certificate, plain text
 * sent to a TLS port, an operation the ACL denies. Each names the dependency and the cause, and
 * never a secret; the codes are in libs/errors and the README's error-code table.
 */
import { StreamfenceError } from '../../libs/errors/index.js';
import type { KafkaSettings, RedisSettings } from './options.js';
import { parseRedisUrl, redisAddresses } from './redis-url.js';
import { kafkaAnswered, redisAnswered } from './answered.js';

/** One error of a failure's chain, as the classifiers below read it. */
interface ChainLink {
  name: string;
  message: string;
  type?: string;
  code?: string;
  /** The broker a kafkajs connection error names, "host:port". */
  broker?: string;
}

/**
 * The error and its causes (kafkajs wraps the real one in retries; node in `cause`; an ioredis
 * Cluster that reached no node in `lastNodeError`).
 */
function chain(err: unknown): ChainLink[] {
  const out: ChainLink[] = [];
  let e = err as
    | (Error & {
        cause?: unknown;
        originalError?: unknown;
        lastNodeError?: unknown;
        type?: string;
        code?: string;
        broker?: string;
      })
    | undefined;
  for (let i = 0; e && i < 6; i++) {
    out.push({
      name: String(e.name ?? ''),
      message: String(e.message ?? e),
      type: e.type,
      code: e.code,
      // kafkajs names the broker of a connection error ("host:port").
      broker: typeof e.broker === 'string' ? e.broker : undefined,
    });
    // kafkajs reports per-topic failures (e.g. of createTopics) as an aggregate.
    const inner = (e as { errors?: unknown[] }).errors;
    if (Array.isArray(inner)) for (const x of inner.slice(0, 5)) out.push(...chain(x));
    e = (e.originalError ?? e.cause ?? e.lastNodeError) as typeof e;
  }
  // Innermost first: the original cause words the reason best.
  return out.reverse();
}

const TLS_WORDS = /certificate|self[- ]signed|unable to verify|CERT_|SSL routines|wrong version number/i;
/**
 * Node's words when the peer ends the connection before the TLS handshake completes: what a plain
 * listener does with a TLS hello (a Kafka PLAINTEXT port always does), so waiting does not fix it.
 */
const TLS_DROPPED = /before secure TLS connection was established/i;

/** Node's and kafkajs' words for a connection the peer closed or reset. */
const CLOSED_WORDS = /Closed connection|ECONNRESET|socket hang up|EPIPE/i;

/**
 * Whether the broker the failure names (or, when it names none, any of the brokers) had answered
 * this process before (see answered.ts).
 */
function answeredBefore(all: ChainLink[], s: KafkaSettings, answered: ReadonlySet<string>): boolean {
  const named = all.map((e) => e.broker).filter((b): b is string => b !== undefined);
  return (named.length > 0 ? named : s.brokers).some((address) => answered.has(address));
}

/**
 * A broker that had answered this process before closed or reset the connection: it went away
 * (a restart, a crash, a failover), which waiting may fix. Returns its address ("host:port"), or
 * null when the failure is not that (at start-up the same words mean a listener expecting TLS).
 */
export function kafkaConnectionLost(
  err: unknown,
  s: KafkaSettings,
  answered: ReadonlySet<string> = kafkaAnswered,
): string | null {
  const all = chain(err);
  if (!all.some((e) => CLOSED_WORDS.test(e.message) || CLOSED_WORDS.test(e.code ?? ''))) return null;
  const named = all.map((e) => e.broker).filter((b): b is string => b !== undefined);
  return (named.length > 0 ? named : s.brokers).find((address) => answered.has(address)) ?? null;
}

/** A typed refusal for a Kafka failure, or null when the cause is not one of the known refusals. */
export function kafkaRefusal(
  err: unknown,
  s: KafkaSettings,
  what = 'connect',
  answered: ReadonlySet<string> = kafkaAnswered,
): StreamfenceError | null {
  const all = chain(err);
  const at = s.brokers.join(',');
  if (all.some((e) => e.name === 'KafkaJSSASLAuthenticationError')) {
    const mech = (s.sasl?.mechanism ?? 'sasl').toUpperCase();
    return new StreamfenceError(
      'AUTH_FAILED',
      `kafka: authentication failed for user ${s.sasl?.username ?? '(none)'} (${mech}) at ${at}; check the user and password`,
    );
  }
  const denied = all.find((e) => /_AUTHORIZATION_FAILED$/.test(e.type ?? ''));
  // kafkajs drops the broker's GROUP_AUTHORIZATION_FAILED answer to FindCoordinator and reports
  // only that no coordinator was found; for an authenticated user that is the group ACL.
  const noCoordinator = s.sasl !== undefined && all.some((e) => e.name === 'KafkaJSGroupCoordinatorNotFound');
  if (denied || noCoordinator) {
    const kind = denied ? denied.type!.replace('_AUTHORIZATION_FAILED', '').toLowerCase() : 'group';
    return new StreamfenceError(
      'NOT_AUTHORISED',
      `kafka: not authorised to ${what} (${kind} ACL) for user ${s.sasl?.username ?? '(none)'}; grant the ACL or use another user`,
    );
  }
  const tls = all.find((e) => TLS_WORDS.test(e.message) || TLS_WORDS.test(e.code ?? ''));
  if (tls) {
    return new StreamfenceError(
      'TLS_FAILED',
      `kafka: TLS handshake with ${at} failed: ${tls.message}; check --kafka-ca-file and the broker's certificate`,
    );
  }
  // A broker that had answered before and now closes went away: a connection lost, no TLS hint.
  if (answeredBefore(all, s, answered)) return null;
  if (s.tls && all.some((e) => TLS_DROPPED.test(e.message)))
    return new StreamfenceError(
      'TLS_FAILED',
      `kafka: ${at} ended the connection during the TLS handshake; check that this port is a TLS listener (a plain one does this) or leave out --kafka-tls`,
    );
  if (!s.tls && all.some((e) => /Closed connection|Connection timeout|ECONNRESET/i.test(e.message))) {
    return new StreamfenceError(
      'TLS_FAILED',
      `kafka: ${at} closed the connection without answering; if its listener expects TLS or SASL, set --kafka-tls and the SASL options`,
    );
  }
  return null;
}

/**
 * ioredis' and node's words for a connection that was there and is gone: closed or reset by the
 * peer, a command given up after the reconnects, a cluster whose nodes stopped answering.
 */
const REDIS_CLOSED_WORDS =
  /Connection is closed|ECONNRESET|EPIPE|socket hang up|Stream isn't writeable|max retries per request|before secure TLS connection was established|None of startup nodes|Failed to refresh slots cache/i;

/**
 * A Redis that had been ready for this process before closed, reset or dropped the connection: it
 * went away (a crash, a restart, a failover), which waiting may fix. Returns its address, or null
 * when the failure is not that (at start-up the same words mean a port that expects TLS).
 */
export function redisConnectionLost(
  err: unknown,
  s: RedisSettings,
  answered: ReadonlySet<string> = redisAnswered,
): string | null {
  const at = redisAddresses(parseRedisUrl(s.url));
  if (!answered.has(at)) return null;
  const all = chain(err);
  return all.some((e) => REDIS_CLOSED_WORDS.test(e.message) || REDIS_CLOSED_WORDS.test(e.code ?? ''))
    ? at
    : null;
}

/** A typed refusal for a Redis failure, or null when the cause is not one of the known refusals. */
export function redisRefusal(
  err: unknown,
  s: RedisSettings,
  answered: ReadonlySet<string> = redisAnswered,
): StreamfenceError | null {
  const all = chain(err);
  const t = parseRedisUrl(s.url);
  const at = redisAddresses(t);
  const user = s.username ?? t.username ?? 'default';
  if (all.some((e) => /WRONGPASS|NOAUTH/.test(e.message)))
    return new StreamfenceError(
      'AUTH_FAILED',
      `redis: authentication failed for user ${user} at ${at}; check the user and password`,
    );
  const noperm = all.find((e) => /NOPERM/.test(e.message));
  if (noperm)
    return new StreamfenceError(
      'NOT_AUTHORISED',
      `redis: not authorised for user ${user} at ${at}: ${noperm.message.replace(/^NOPERM\s*/, '')}; grant the ACL or use another user (or a key prefix the user may use)`,
    );
  const tls = all.find((e) => TLS_WORDS.test(e.message) || TLS_WORDS.test(e.code ?? ''));
  if (tls)
    return new StreamfenceError(
      'TLS_FAILED',
      `redis: TLS handshake with ${at} failed: ${tls.message}; check --redis-ca-file and the server's certificate`,
    );
  // A Redis that had been ready before and now closes went away: a connection lost, no TLS hint.
  if (answered.has(at)) return null;
  if (t.tls && all.some((e) => TLS_DROPPED.test(e.message)))
    return new StreamfenceError(
      'TLS_FAILED',
      `redis: ${at} ended the connection during the TLS handshake; check that this port serves TLS or use a redis:// URL`,
    );
  // A cluster client reports every unreachable seed as a closed connection: no TLS guess there.
  if (
    !t.tls &&
    !t.cluster &&
    networkCause(err) === null &&
    all.some((e) => /Connection is closed|ECONNRESET|socket hang up/i.test(e.message))
  )
    return new StreamfenceError(
      'TLS_FAILED',
      `redis: ${at} closed the connection; if it expects TLS, use a rediss:// URL`,
    );
  return null;
}

/** Network failures in words, tried in order against each error in the chain (message and code). */
const NETWORK_CAUSES: [RegExp, string][] = [
  [/ECONNREFUSED/, 'connection refused'],
  [/ENOTFOUND|EAI_AGAIN|EAI_NONAME/, 'unknown host'],
  [/EHOSTUNREACH/, 'host unreachable'],
  [/ENETUNREACH/, 'network unreachable'],
  [/ETIMEDOUT|Connection timeout|connect timed? ?out/i, 'no answer (timed out)'],
];

/**
 * Why a connection could not be made, in words ("connection refused", "unknown host", ...) and
 * the address the failure names when it names one; null when the failure is not a network one.
 * Long-running commands can use it for their retry lines, one-shot commands for their refusal.
 */
export function networkCause(err: unknown): { cause: string; address: string | null } | null {
  for (const e of chain(err)) {
    const text = `${e.code ?? ''} ${e.message}`;
    for (const [pattern, words] of NETWORK_CAUSES) {
      if (pattern.test(text)) {
        const addr = /(\d{1,3}(?:\.\d{1,3}){3}|\[[0-9a-f:]+\]|[A-Za-z0-9.-]+):(\d{1,5})\b/.exec(e.message);
        return { cause: words, address: addr ? `${addr[1]}:${addr[2]}` : null };
      }
    }
  }
  return null;
}

/** The one line for an unreachable dependency: "kafka 127.0.0.1:9999: connection refused". */
export function unreachableLine(dependency: 'kafka' | 'redis', address: string, cause: string): string {
  return `${dependency} ${address}: ${cause}`;
}

/** SERVICE_UNAVAILABLE for a Kafka that cannot be reached at all, or null for other failures. */
export function kafkaUnreachable(
  err: unknown,
  s: KafkaSettings,
  answered: ReadonlySet<string> = kafkaAnswered,
): StreamfenceError | null {
  const lost = kafkaConnectionLost(err, s, answered);
  const n = networkCause(err) ?? (lost === null ? null : { cause: 'connection lost', address: lost });
  if (n === null) return null;
  const at = n.address ?? s.brokers.join(',');
  return new StreamfenceError(
    'SERVICE_UNAVAILABLE',
    `${unreachableLine('kafka', at, n.cause)}; check --brokers (or STREAMFENCE_BROKERS) and that Kafka is running there`,
    { cause: err },
  );
}

/** SERVICE_UNAVAILABLE for a Redis that cannot be reached at all, or null for other failures. */
export function redisUnreachable(
  err: unknown,
  s: RedisSettings,
  answered: ReadonlySet<string> = redisAnswered,
): StreamfenceError | null {
  const lost = redisConnectionLost(err, s, answered);
  const n =
    networkCause(err) ??
    (lost === null ? null : { cause: 'connection lost', address: lost }) ??
    clusterUnreachable(err, s);
  if (n === null) return null;
  const at = n.address ?? redisAddresses(parseRedisUrl(s.url));
  return new StreamfenceError(
    'SERVICE_UNAVAILABLE',
    `${unreachableLine('redis', at, n.cause)}; check --redis (or STREAMFENCE_REDIS_URL) and that Redis is running there`,
    { cause: err },
  );
}

/**
 * A Redis Cluster client that reached none of its seeds says only that ("None of startup nodes is
 * available", "Failed to refresh slots cache"): the node's own socket error is not passed on.
 */
function clusterUnreachable(err: unknown, s: RedisSettings): { cause: string; address: null } | null {
  if (!parseRedisUrl(s.url).cluster) return null;
  const all = chain(err);
  return all.some((e) => /None of startup nodes is available|Failed to refresh slots cache/i.test(e.message))
    ? { cause: 'no cluster seed node answered', address: null }
    : null;
}

/**
 * The one-line typed error for any failure to start talking to Kafka: unreachable, refused (auth,
 * TLS, ACL), or else a generic line that names the brokers without the client library's text.
 */
export function kafkaFailure(err: unknown, s: KafkaSettings, what = 'connect'): StreamfenceError {
  if (err instanceof StreamfenceError) return err;
  // Refusals first: a TLS or SASL listener answering plain text can look like a timeout.
  return (
    kafkaRefusal(err, s, what) ??
    kafkaUnreachable(err, s) ??
    new StreamfenceError(
      'SERVICE_UNAVAILABLE',
      `kafka ${s.brokers.join(',')}: could not ${what} (${kafkaReason(err)}); check --brokers and the broker's state`,
      { cause: err },
    )
  );
}

/** The same for Redis. */
export function redisFailure(err: unknown, s: RedisSettings): StreamfenceError {
  if (err instanceof StreamfenceError) return err;
  return (
    redisUnreachable(err, s) ??
    redisRefusal(err, s) ??
    new StreamfenceError(
      'SERVICE_UNAVAILABLE',
      `redis ${redisAddresses(parseRedisUrl(s.url))}: could not connect (${kafkaReason(err)}); check --redis and the server's state`,
      { cause: err },
    )
  );
}

/** The innermost cause's message, shortened to its first clause, without class names. */
function kafkaReason(err: unknown): string {
  const inner = chain(err)[0];
  const text = (inner?.message ?? String(err)).split('\n')[0];
  return text.replace(/^KafkaJS\w+:\s*/, '').slice(0, 160);
}
