/**
 * A Redis Cluster of a test's or a bench's own, started with the real
 * `deploy/local/stack-up.sh --redis-cluster` (or `--redis-cluster-tls`: TLS only, ACL users) in a
 * stack folder of its own under the given parent, so its nodes' pid files, logs, certificates and
 * env file are separate from the shared stack's. The Kafka broker and Redis given are reused by
 * stack-up (it finds them answering and starts neither), so only the six cluster nodes are
 * started, on the caller's ports, and stack-down stops only those. Shared by
 * test/harness/stack-redis-cluster.ts (integration tests) and the redis-failover bench.
 */
import { execFile } from 'node:child_process';
import { mkdirSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { Redis, type RedisOptions } from 'ioredis';
import { buildRedis, type RedisClient, type RedisSettings } from '../../services/connect/index.js';

const run = promisify(execFile);

function repoRoot(dir: string): string {
  for (let at = dir; ; at = path.dirname(at)) {
    try {
      readFileSync(path.join(at, 'package.json'));
      return at;
    } catch {
      if (path.dirname(at) === at) throw new Error(`no package.json above ${dir}`);
    }
  }
}
const REPO_ROOT = repoRoot(path.dirname(fileURLToPath(import.meta.url)));

/** The cluster's users: the monitor's, inspect's read-only one, and admin for checks. */
export type ClusterUser = 'monitor' | 'reader' | 'admin';

/** One node's view of the cluster: each node's port, role flags and the slot ranges it serves. */
export interface ClusterNodeLine {
  port: number;
  primary: boolean;
  failed: boolean;
  slots: [number, number][];
}

/** A running cluster: its URL, node ports, users, and ways to look at, kill or restart nodes. */
export interface StackRedisCluster {
  /** redis+cluster://127.0.0.1:<port>,... (rediss+cluster:// with TLS) as stack-up wrote it. */
  url: string;
  tls: boolean;
  ports: number[];
  /** The stack folder (env file, pid files, node folders, certificates and passwords). */
  dir: string;
  /** The STREAMFENCE_REDIS_* variables a command needs to connect as the user. */
  env(user: ClusterUser): Record<string, string>;
  /** Connection settings for the user (what the commands read from env()). */
  settings(user: ClusterUser): RedisSettings;
  /** A cluster client as admin for checks (not the monitor's; lazy: connects on first use). */
  client(): RedisClient;
  /** CLUSTER NODES as the node on `port` sees it (asked of that node alone). */
  nodesSeenBy(port: number): Promise<ClusterNodeLine[]>;
  /** The port of the live primary serving `slot`, as the node on `askPort` sees it; null if none. */
  primaryOfSlot(askPort: number, slot: number): Promise<number | null>;
  /** The pid of the node on the port, from its pid file. */
  pidOf(port: number): number;
  /** Runs stack-up again (restarts the nodes that are not running); returns its output. */
  up(): Promise<string>;
  /** stack-down for this folder, then removes it. */
  down(): Promise<void>;
}

export interface RedisClusterStackOptions {
  /** First node's port; the six use basePort..basePort+5, bus ports basePort+10000... */
  basePort: number;
  /** TLS only with ACL users (stack-up --redis-cluster-tls). */
  tls?: boolean;
  /** The Kafka port stack-up finds answering (and reuses). */
  kafkaPort: string;
  /** The Redis stack-up finds answering (and reuses). */
  redisUrl: string;
  /** Folder the stack folder is made in (under test-artifacts/ for tests). */
  parentDir: string;
}

function stackEnv(dir: string, o: RedisClusterStackOptions): NodeJS.ProcessEnv {
  return {
    ...process.env,
    STREAMFENCE_STACK_DIR: dir,
    STREAMFENCE_KAFKA_PORT: o.kafkaPort,
    STREAMFENCE_REDIS_URL: o.redisUrl,
    // If the given Redis did not answer, stack-up would start one here: keep it on our range too.
    STREAMFENCE_STACK_REDIS_PORT: String(o.basePort + 9),
    STREAMFENCE_REDIS_CLUSTER_PORT: String(o.basePort),
    STREAMFENCE_REDIS_CLUSTER_BUS_PORT: String(o.basePort + 10_000),
  };
}

/** The env file's KEY=value lines. */
function readEnvFile(file: string): Record<string, string> {
  const vars: Record<string, string> = {};
  for (const line of readFileSync(file, 'utf8').split('\n')) {
    const m = /^([A-Z0-9_]+)=(.*)$/.exec(line.trim());
    if (m) vars[m[1]] = m[2];
  }
  return vars;
}

/** CLUSTER NODES text as lines. */
function parseClusterNodes(text: string): ClusterNodeLine[] {
  return text
    .trim()
    .split('\n')
    .map((line) => {
      const f = line.split(' ');
      const slots = f.slice(8).flatMap((s): [number, number][] => {
        const m = /^(\d+)(?:-(\d+))?$/.exec(s);
        return m === null ? [] : [[Number(m[1]), Number(m[2] ?? m[1])]];
      });
      return {
        port: Number(/:(\d+)@/.exec(f[1])![1]),
        primary: f[2].includes('master'),
        failed: /\bfail\b/.test(f[2].replace(/,/g, ' ')),
        slots,
      };
    });
}

/** Starts the six nodes; fails (never skips) when they cannot start. */
export async function startRedisClusterStack(o: RedisClusterStackOptions): Promise<StackRedisCluster> {
  mkdirSync(o.parentDir, { recursive: true });
  const dir = mkdtempSync(path.join(o.parentDir, 'redis-cluster-'));
  const env = stackEnv(dir, o);
  const flag = o.tls === true ? '--redis-cluster-tls' : '--redis-cluster';
  const up = async (): Promise<string> => {
    try {
      const out = await run('bash', ['deploy/local/stack-up.sh', flag], { cwd: REPO_ROOT, env });
      return out.stdout + out.stderr;
    } catch (e) {
      const x = e as { stdout?: string; stderr?: string };
      throw new Error(`stack-up.sh ${flag} failed:\n${x.stdout ?? ''}${x.stderr ?? ''}`, { cause: e });
    }
  };
  const down = async () => {
    await run('bash', ['deploy/local/stack-down.sh'], { cwd: REPO_ROOT, env }).catch(() => {});
    rmSync(dir, { recursive: true, force: true });
  };
  try {
    await up();
  } catch (e) {
    await down();
    throw e;
  }
  const vars = readEnvFile(path.join(dir, 'env'));
  const url = vars.STREAMFENCE_STACK_REDIS_CLUSTER_URL;
  if (url === undefined)
    throw new Error(`stack-up wrote no STREAMFENCE_STACK_REDIS_CLUSTER_URL:\n${dir}/env`);
  const ports = url
    .replace(/^rediss?\+cluster:\/\//, '')
    .split(',')
    .map((hp) => Number(hp.split(':')[1]));
  const tls = o.tls === true;
  const envOf = (user: ClusterUser): Record<string, string> => {
    if (!tls) return { STREAMFENCE_REDIS_URL: url };
    const named = user === 'monitor' ? 'STREAMFENCE_' : `STREAMFENCE_${user.toUpperCase()}_`;
    return {
      STREAMFENCE_REDIS_URL: url,
      STREAMFENCE_REDIS_USERNAME: vars[`${named}REDIS_USERNAME`],
      STREAMFENCE_REDIS_PASSWORD_FILE: vars[`${named}REDIS_PASSWORD_FILE`],
      STREAMFENCE_REDIS_CA_FILE: vars.STREAMFENCE_REDIS_CA_FILE,
    };
  };
  const settingsOf = (user: ClusterUser): RedisSettings => {
    const e = envOf(user);
    if (!tls) return { url };
    return {
      url,
      username: e.STREAMFENCE_REDIS_USERNAME,
      password: readFileSync(e.STREAMFENCE_REDIS_PASSWORD_FILE, 'utf8').trim(),
      caFile: e.STREAMFENCE_REDIS_CA_FILE,
    };
  };
  const admin = settingsOf('admin');
  /** A plain client of one node (a cluster client would follow redirects to other nodes). */
  const nodeOptions = (port: number): RedisOptions => ({
    host: '127.0.0.1',
    port,
    maxRetriesPerRequest: 0,
    lazyConnect: true,
    username: admin.username,
    password: admin.password,
    tls: tls ? { ca: readFileSync(admin.caFile!) } : undefined,
  });
  const nodesSeenBy = async (port: number): Promise<ClusterNodeLine[]> => {
    const node = new Redis(nodeOptions(port));
    node.on('error', () => {});
    try {
      await node.connect();
      return parseClusterNodes((await node.call('CLUSTER', 'NODES')) as string);
    } finally {
      node.disconnect();
    }
  };
  return {
    url,
    tls,
    ports,
    dir,
    env: envOf,
    settings: settingsOf,
    client: () => buildRedis(admin),
    nodesSeenBy,
    primaryOfSlot: async (askPort, slot) => {
      const owner = (await nodesSeenBy(askPort)).find(
        (n) => n.primary && !n.failed && n.slots.some(([a, b]) => slot >= a && slot <= b),
      );
      return owner?.port ?? null;
    },
    pidOf: (port) => Number(readFileSync(path.join(dir, 'redis-cluster', `${port}.pid`), 'utf8').trim()),
    up,
    down,
  };
}
