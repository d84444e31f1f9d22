/**
 * The Redis URL forms, read in one place so every command, log line and error names the same
 * addresses:
 *   redis://[user[:password]@]host[:port][/db]       one server (rediss:// for TLS)
 *   redis+cluster://[user[:password]@]host:port,host:port,...   a Redis Cluster, by seed nodes
 *   rediss+cluster://...                              the same over TLS
 * A cluster URL names seed nodes only: the client asks them for the slot map and talks to every
 * primary it lists. A cluster has one database, so a cluster URL takes no /db path.
 */
import { StreamfenceError } from '../../libs/errors/index.js';

/** One host and port. */
export interface RedisNode {
  host: string;
  port: number;
}

/** What a Redis URL says: one server or a cluster's seeds, TLS, the user and password in it. */
export interface RedisTarget {
  cluster: boolean;
  tls: boolean;
  nodes: RedisNode[];
  db: number;
  username?: string;
  password?: string;
}

const SCHEMES: Record<string, { cluster: boolean; tls: boolean }> = {
  'redis:': { cluster: false, tls: false },
  'rediss:': { cluster: false, tls: true },
  'redis+cluster:': { cluster: true, tls: false },
  'rediss+cluster:': { cluster: true, tls: true },
};

const FORMS = 'use redis://host:port, rediss://host:port, or redis+cluster://host:port,host:port,...';

const invalid = (msg: string) => new StreamfenceError('ARGS_INVALID', msg);

/**
 * Parses a Redis URL (ARGS_INVALID with what to change otherwise). node's URL parser takes one host
 * only, so a cluster URL's host list is split off first and each seed read as host:port.
 */
export function parseRedisUrl(url: string): RedisTarget {
  const scheme = /^([a-z+]+:)\/\//i.exec(url);
  if (scheme === null) throw invalid(`the Redis URL is not a URL; ${FORMS}`);
  const kind = SCHEMES[scheme[1].toLowerCase()];
  if (kind === undefined)
    throw invalid(
      `the Redis URL scheme must be redis://, rediss://, redis+cluster:// or rediss+cluster://, not ${scheme[1]}//`,
    );
  const rest = url.slice(scheme[0].length);
  // The authority ends at the first '/' after any user info (a password may hold '/' only escaped).
  const at = rest.lastIndexOf('@', rest.indexOf('/') === -1 ? rest.length : rest.indexOf('/'));
  const userInfo = at === -1 ? '' : rest.slice(0, at + 1);
  const afterUser = rest.slice(at + 1);
  const slash = afterUser.indexOf('/');
  const hostList = slash === -1 ? afterUser : afterUser.slice(0, slash);
  const path = slash === -1 ? '' : afterUser.slice(slash);
  const hosts = hostList.split(',');
  if (!kind.cluster && hosts.length > 1)
    throw invalid(`the Redis URL names ${hosts.length} hosts; for a Redis Cluster use redis+cluster://`);
  let first: URL;
  try {
    first = new URL(`redis://${userInfo}${hosts[0]}${path}`);
  } catch {
    throw invalid(`the Redis URL is not a URL; ${FORMS}`);
  }
  const nodes = kind.cluster ? hosts.map(seedNode) : [{ host: bare(first.hostname), port: portOf(first) }];
  if (path.length > 1 && !/^\/\d+$/.test(path))
    throw invalid(`the Redis URL path must be a database number (/0), not ${path}`);
  const db = path.length > 1 ? Number(path.slice(1)) : 0;
  if (kind.cluster && db !== 0)
    throw invalid(`a Redis Cluster has only database 0; drop ${path} from the redis+cluster:// URL`);
  return {
    ...kind,
    nodes,
    db,
    username: first.username ? decodeURIComponent(first.username) : undefined,
    password: first.password ? decodeURIComponent(first.password) : undefined,
  };
}

/** A cluster seed: host:port (the port is required: cluster nodes rarely listen on 6379 alone). */
function seedNode(raw: string): RedisNode {
  const m = /^(\[[0-9a-fA-F:.]+\]|[^\s:/[\]@,]+):(\d{1,5})$/.exec(raw);
  if (m === null)
    throw invalid(`Redis Cluster seed "${raw}" must be host:port (redis+cluster://host:port,host:port,...)`);
  return { host: bare(m[1]), port: Number(m[2]) };
}

const portOf = (u: URL): number => (u.port ? Number(u.port) : 6379);
/** An IPv6 address without its URL brackets, as sockets take it. */
const bare = (host: string): string => host.replace(/^\[(.*)\]$/, '$1');

/** The addresses for logs and error lines: "host:port" or "host:port,host:port" (never a secret). */
export function redisAddresses(t: RedisTarget): string {
  return t.nodes
    .map((n) => (n.host.includes(':') ? `[${n.host}]:${n.port}` : `${n.host}:${n.port}`))
    .join(',');
}
