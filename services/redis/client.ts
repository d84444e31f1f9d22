/**
 * Redis connection from a URL plus optional secrets from the environment or files. `rediss://`
 * turns TLS on. Commands fail fast (no long offline queue): callers own the retry policy, so
 * an outage shows up as backoff in logs and metrics rather than as silent queueing.
 */
import { Redis, type RedisOptions } from 'ioredis';
import { StreamfenceError } from '../../libs/errors/index.js';
import { readPem } from '../tls-files.js';

export interface RedisConnectOptions {
  url: string;
  username?: string;
  password?: string;
  /** PEM CA file to trust (rediss:// only; the system store is used otherwise). */
  caFile?: string;
  certFile?: string;
  keyFile?: string;
  /** Per-command timeout; a paused server makes calls fail after this and the caller retries. */
  commandTimeoutMs?: number;
}

export function redisOptions(o: RedisConnectOptions): RedisOptions {
  let u: URL;
  try {
    u = new URL(o.url);
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
    username: o.username ?? (u.username ? decodeURIComponent(u.username) : undefined),
    password: o.password ?? (u.password ? decodeURIComponent(u.password) : undefined),
    maxRetriesPerRequest: 1,
    enableOfflineQueue: true,
    commandTimeout: o.commandTimeoutMs ?? 5_000,
    connectTimeout: 5_000,
    lazyConnect: true,
    // Reconnect forever with a capped delay; the caller's retries decide what waits.
    retryStrategy: (times) => Math.min(100 * 2 ** Math.min(times, 6), 3_000),
  };
  if (u.protocol === 'rediss:' || o.caFile || o.certFile) {
    opts.tls = {
      servername: u.hostname,
      ca: o.caFile ? readPem('Redis', o.caFile, 'CA') : undefined,
      cert: o.certFile ? readPem('Redis', o.certFile, 'certificate') : undefined,
      key: o.keyFile ? readPem('Redis', o.keyFile, 'key') : undefined,
    };
  }
  return opts;
}

export function createRedis(o: RedisConnectOptions): Redis {
  const r = new Redis(redisOptions(o));
  // Errors are reported by the calls that fail; without a listener ioredis prints them itself.
  r.on('error', () => {});
  return r;
}
