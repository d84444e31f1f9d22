/**
 * The ioredis client of every command, from RedisSettings: a URL plus ACL user, password and TLS
 * files. `rediss://` turns TLS on; `redis+cluster://` (or `rediss+cluster://`) builds an ioredis
 * Cluster from the seed nodes, with the same user, password, TLS and timeouts for every node it
 * talks to. Commands fail fast (no long offline queue): callers own the retry policy, so an outage
 * shows up as backoff in logs and metrics rather than silent queueing.
 */
import { isIP } from 'node:net';
import { Cluster, Redis, type ClusterOptions, type RedisOptions } from 'ioredis';
import { readPem } from './files.js';
import type { RedisSettings } from './options.js';
import { noteRedisAnswered } from './answered.js';
import { parseRedisUrl, redisAddresses, type RedisTarget } from './redis-url.js';
import { redisFailure, redisRefusal } from './refusals.js';

/** A client of one Redis server or of a Redis Cluster: both take the same commands and scripts. */
export type RedisClient = Redis | Cluster;

/** True for a Redis Cluster client (commands that address every node, such as SCAN, need to know). */
export function isClusterClient(r: RedisClient): r is Cluster {
  return r instanceof Cluster;
}

export interface RedisClientOptions {
  /** Per-command timeout; a paused server makes calls fail after this and the caller retries. */
  commandTimeoutMs?: number;
  /**
   * One-shot commands (inspect) try once and fail: no reconnecting, so a closed port is reported
   * at once with its cause instead of after reconnect attempts.
   */
  once?: boolean;
}

/** Reconnect forever with a capped delay; the caller's retries decide what waits. */
const reconnectDelay = (times: number): number => Math.min(100 * 2 ** Math.min(times, 6), 3_000);

/** The options every connection shares, one server's or each cluster node's (no host, port, db). */
function connectionOptions(s: RedisSettings, t: RedisTarget, o: RedisClientOptions): RedisOptions {
  const opts: RedisOptions = {
    username: s.username ?? t.username,
    password: s.password ?? t.password,
    maxRetriesPerRequest: 1,
    commandTimeout: o.commandTimeoutMs ?? 5_000,
    connectTimeout: 5_000,
  };
  if (t.tls) {
    const host = t.nodes[0].host;
    opts.tls = {
      // SNI takes host names only (node warns about an IP); the certificate is checked either way.
      // A cluster's nodes share one certificate name in practice: the first seed's name is sent.
      servername: isIP(host) ? undefined : host,
      ca: s.caFile ? readPem('Redis', s.caFile, 'CA') : undefined,
      cert: s.certFile ? readPem('Redis', s.certFile, 'certificate') : undefined,
      key: s.keyFile ? readPem('Redis', s.keyFile, 'key') : undefined,
    };
  }
  return opts;
}

/** The ioredis options for a one-server URL (exported for tests; a cluster URL: clusterOptions). */
export function redisOptions(s: RedisSettings, o: RedisClientOptions = {}): RedisOptions {
  const t = parseRedisUrl(s.url);
  return {
    ...connectionOptions(s, t, o),
    host: t.nodes[0].host,
    port: t.nodes[0].port,
    db: t.db,
    enableOfflineQueue: true,
    lazyConnect: true,
    retryStrategy: o.once === true ? () => null : reconnectDelay,
  };
}

/**
 * The ioredis Cluster options for a cluster URL (exported for tests). A primary that dies answers
 * nothing until its replica is promoted (cluster-node-timeout plus an election, seconds): commands
 * to its slots fail meanwhile and the caller retries them, while the client re-reads the slot map
 * every few seconds and on every MOVED answer, so it finds the new primary without a restart.
 */
export function clusterOptions(s: RedisSettings, o: RedisClientOptions = {}): ClusterOptions {
  const t = parseRedisUrl(s.url);
  return {
    redisOptions: connectionOptions(s, t, o),
    enableOfflineQueue: true,
    lazyConnect: true,
    clusterRetryStrategy: o.once === true ? () => null : reconnectDelay,
    // A few quick tries within one call; longer outages are the caller's retries.
    retryDelayOnFailover: 200,
    retryDelayOnClusterDown: 200,
    retryDelayOnTryAgain: 200,
    maxRedirections: 8,
    slotsRefreshTimeout: 2_000,
    slotsRefreshInterval: 2_000,
  };
}

/** The one way a command gets an ioredis client (not yet connected: call connect()). */
export function buildRedis(s: RedisSettings, o: RedisClientOptions = {}): RedisClient {
  const t = parseRedisUrl(s.url);
  const r = t.cluster
    ? new Cluster(
        t.nodes.map((n) => ({ host: n.host, port: n.port })),
        clusterOptions(s, o),
      )
    : new Redis(redisOptions(s, o));
  // Errors are reported by the calls that fail; without a listener ioredis prints them itself.
  r.on('error', () => {});
  // Once ready, a later close of this address is a connection lost, not a TLS hint (answered.ts).
  r.on('ready', () => noteRedisAnswered(redisAddresses(t)));
  return r;
}

/**
 * Connects a client from buildRedis. A refusal (wrong password, unknown ACL user, untrusted
 * certificate, plain text to a TLS port) is thrown as its one-line typed error. ioredis reports
 * the server's answer (WRONGPASS, NOPERM) only as an 'error' event and rejects connect() with a
 * bare "Connection is closed", so the last event is kept and judged instead. Any other failure is
 * the one-line SERVICE_UNAVAILABLE of redisFailure; the client is disconnected on every failure,
 * so nothing keeps reconnecting in the background. For long-running commands (the client keeps
 * reconnecting once started); one-shot commands use connectRedisOnce.
 */
export async function connectRedis(redis: RedisClient, s: RedisSettings): Promise<void> {
  let last: unknown;
  const keep = (e: unknown) => {
    last = e;
  };
  redis.on('error', keep);
  try {
    await redis.connect();
  } catch (e) {
    redis.disconnect();
    const cause = last ?? e;
    throw redisRefusal(cause, s) ?? redisRefusal(e, s) ?? redisFailure(cause, s);
  } finally {
    redis.off('error', keep);
  }
}

/** What a readiness check found: Redis answers, and on a cluster how many primaries were asked. */
export interface RedisAnswer {
  ok: boolean;
  /** The primaries the client's slot map names (a cluster only); ok means each answered PING. */
  primaries?: number;
  /** Slots the map gives no primary, or one the client has lost (a cluster only; ok needs 0). */
  slotsDown?: number;
}

/** Redis Cluster's fixed number of hash slots. */
const CLUSTER_SLOTS = 16_384;

/**
 * Whether Redis answers, for /readyz. One server: PING. A cluster: every one of the 16,384 slots
 * has a primary in the client's slot map whose connection is still in the client's pool, and
 * every such primary answers PING within timeoutMs. One PING to any node would pass while a dead
 * primary's slots (and the checkpoints of partitions there) are down; ioredis drops a dead node
 * from its pool at once but keeps it in the slot map until its replica is promoted and the map
 * re-read, so this stays false for exactly that time.
 */
export async function redisAnswers(redis: RedisClient, timeoutMs: number): Promise<RedisAnswer> {
  const pong = async (node: Redis): Promise<boolean> => {
    let timer: NodeJS.Timeout | undefined;
    const late = new Promise<string>((resolve) => {
      timer = setTimeout(() => resolve('timeout'), timeoutMs);
    });
    try {
      return (await Promise.race([node.ping(), late])) === 'PONG';
    } catch {
      return false;
    } finally {
      clearTimeout(timer);
    }
  };
  if (!isClusterClient(redis)) return { ok: await pong(redis) };
  // ioredis names nodes "host:port" in both its slot map and its pool.
  const pool = new Map(redis.nodes('master').map((n) => [`${n.options.host}:${n.options.port}`, n]));
  const owners = new Set<string>();
  let slotsDown = 0;
  for (let slot = 0; slot < CLUSTER_SLOTS; slot++) {
    const owner = redis.slots[slot]?.[0];
    if (owner !== undefined) owners.add(owner);
    if (owner === undefined || !pool.has(owner)) slotsDown++;
  }
  const answers = await Promise.all([...owners].filter((k) => pool.has(k)).map((k) => pong(pool.get(k)!)));
  return { ok: slotsDown === 0 && answers.every(Boolean), primaries: owners.size, slotsDown };
}
