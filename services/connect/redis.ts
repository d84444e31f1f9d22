/**
 * The ioredis client of every command, from RedisSettings: a URL plus ACL user, password and TLS
 * files. `rediss://` turns TLS on. Commands fail fast (no long offline queue): callers own the
 * retry policy, so an outage shows up as backoff in logs and metrics rather than silent queueing.
 */
import { isIP } from 'node:net';
import { Redis, type RedisOptions } from 'ioredis';
import { StreamfenceError } from '../../libs/errors/index.js';
import { readPem } from './files.js';
import type { RedisSettings } from './options.js';
import { redisFailure, redisRefusal } from './refusals.js';

export interface RedisClientOptions {
  /** Per-command timeout; a paused server makes calls fail after this and the caller retries. */
  commandTimeoutMs?: number;
  /**
   * One-shot commands (inspect) try once and fail: no reconnecting, so a closed port is reported
   * at once with its cause instead of after reconnect attempts.
   */
  once?: boolean;
}

/** The ioredis options for the settings (exported for tests). */
export function redisOptions(s: RedisSettings, o: RedisClientOptions = {}): RedisOptions {
  let u: URL;
  try {
    u = new URL(s.url);
  } catch {
    throw new StreamfenceError(
      'ARGS_INVALID',
      'the Redis URL is not a URL; use redis://host:port or rediss://host:port',
    );
  }
  if (u.protocol !== 'redis:' && u.protocol !== 'rediss:') {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `the Redis URL scheme must be redis:// or rediss://, not ${u.protocol}//`,
    );
  }
  const opts: RedisOptions = {
    host: u.hostname,
    port: u.port ? Number(u.port) : 6379,
    db: u.pathname.length > 1 ? Number(u.pathname.slice(1)) : 0,
    username: s.username ?? (u.username ? decodeURIComponent(u.username) : undefined),
    password: s.password ?? (u.password ? decodeURIComponent(u.password) : undefined),
    maxRetriesPerRequest: 1,
    enableOfflineQueue: true,
    commandTimeout: o.commandTimeoutMs ?? 5_000,
    connectTimeout: 5_000,
    lazyConnect: true,
    // Reconnect forever with a capped delay; the caller's retries decide what waits.
    retryStrategy: o.once === true ? () => null : (times) => Math.min(100 * 2 ** Math.min(times, 6), 3_000),
  };
  if (u.protocol === 'rediss:') {
    opts.tls = {
      // SNI takes host names only (node warns about an IP); the certificate is checked either way.
      servername: isIP(u.hostname) ? undefined : u.hostname,
      ca: s.caFile ? readPem('Redis', s.caFile, 'CA') : undefined,
      cert: s.certFile ? readPem('Redis', s.certFile, 'certificate') : undefined,
      key: s.keyFile ? readPem('Redis', s.keyFile, 'key') : undefined,
    };
  }
  return opts;
}

/** The one way a command gets an ioredis client (not yet connected: call connect()). */
export function buildRedis(s: RedisSettings, o: RedisClientOptions = {}): Redis {
  const r = new Redis(redisOptions(s, o));
  // Errors are reported by the calls that fail; without a listener ioredis prints them itself.
  r.on('error', () => {});
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
export async function connectRedis(redis: Redis, s: RedisSettings): Promise<void> {
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
