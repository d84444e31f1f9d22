/**
 * A Redis Cluster of a test's own, started with the real `deploy/local/stack-up.sh --redis-cluster`
 * in a stack folder of the test's own (so its nodes' pid files, logs and env file are separate from
 * the shared stack's). The Kafka broker and Redis the harness found are reused by stack-up (it
 * finds them answering and starts neither), so only the six cluster nodes are started here, on the
 * test's ports, and stack-down stops only those. Fails the test, never skips it, when the cluster
 * cannot start.
 */
import { execFile } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { promisify } from 'node:util';
import { Cluster, Redis } from 'ioredis';
import { kafkaBrokers, redisUrl } from './services.js';

const run = promisify(execFile);
const REPO_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

/** A running test cluster: its URL, node ports, and ways to kill or restart nodes. */
export interface StackRedisCluster {
  /** redis+cluster://127.0.0.1:<port>,... as stack-up wrote it into the env file. */
  url: string;
  ports: number[];
  /** The stack folder (env file, pid files, node folders). */
  dir: string;
  /** A cluster client for checks (not the monitor's). */
  client(): Cluster;
  /** The pid of the node on the port, from its pid file. */
  pidOf(port: number): number;
  /** Runs stack-up again (restarts the nodes that are not running); returns its output. */
  up(): Promise<string>;
  /** stack-down for this folder, then removes it. */
  down(): Promise<void>;
}

function stackEnv(dir: string, basePort: number): NodeJS.ProcessEnv {
  const kafkaPort = /:(\d+)$/.exec(kafkaBrokers()[0])?.[1] ?? '9092';
  return {
    ...process.env,
    STREAMFENCE_STACK_DIR: dir,
    STREAMFENCE_KAFKA_PORT: kafkaPort,
    STREAMFENCE_REDIS_URL: redisUrl(),
    // If the harness's Redis did not answer, stack-up would start one here: keep it on our range too.
    STREAMFENCE_STACK_REDIS_PORT: String(basePort + 9),
    STREAMFENCE_REDIS_CLUSTER_PORT: String(basePort),
    STREAMFENCE_REDIS_CLUSTER_BUS_PORT: String(basePort + 10_000),
  };
}

/** Starts the six nodes on basePort..basePort+5 (bus ports basePort+10000..). */
export async function startStackRedisCluster(basePort: number): Promise<StackRedisCluster> {
  const dir = mkdtempSync(path.join(tmpdir(), 'sf-redis-cluster-'));
  const env = stackEnv(dir, basePort);
  const up = async (): Promise<string> => {
    try {
      const out = await run('bash', ['deploy/local/stack-up.sh', '--redis-cluster'], { cwd: REPO_ROOT, env });
      return out.stdout + out.stderr;
    } catch (e) {
      const x = e as { stdout?: string; stderr?: string };
      throw new Error(`stack-up.sh --redis-cluster failed:\n${x.stdout ?? ''}${x.stderr ?? ''}`, {
        cause: e,
      });
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
  const vars = readFileSync(path.join(dir, 'env'), 'utf8');
  const url = /^STREAMFENCE_STACK_REDIS_CLUSTER_URL=(.+)$/m.exec(vars)?.[1];
  if (url === undefined) throw new Error(`stack-up wrote no STREAMFENCE_STACK_REDIS_CLUSTER_URL:\n${vars}`);
  const ports = url
    .replace(/^redis\+cluster:\/\//, '')
    .split(',')
    .map((hp) => Number(hp.split(':')[1]));
  return {
    url,
    ports,
    dir,
    client: () =>
      new Cluster(
        ports.map((port) => ({ host: '127.0.0.1', port })),
        { redisOptions: { maxRetriesPerRequest: 2 }, slotsRefreshInterval: 1_000 },
      ),
    pidOf: (port) => Number(readFileSync(path.join(dir, 'redis-cluster', `${port}.pid`), 'utf8').trim()),
    up,
    down,
  };
}

/** One node's view of the cluster: each node's port, role flags and the slot ranges it serves. */
export interface ClusterNodeLine {
  port: number;
  primary: boolean;
  failed: boolean;
  slots: [number, number][];
}

/** CLUSTER NODES as seen from the node on `port` (a plain client: a cluster one would redirect). */
export async function clusterNodes(port: number): Promise<ClusterNodeLine[]> {
  const node = new Redis({ host: '127.0.0.1', port, maxRetriesPerRequest: 0, lazyConnect: true });
  node.on('error', () => {});
  try {
    await node.connect();
    const text = (await node.call('CLUSTER', 'NODES')) as string;
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
  } finally {
    node.disconnect();
  }
}

/** The port of the live primary serving `slot`, as the node on `askPort` sees it; null if none. */
export async function primaryOfSlot(askPort: number, slot: number): Promise<number | null> {
  const owner = (await clusterNodes(askPort)).find(
    (n) => n.primary && !n.failed && n.slots.some(([a, b]) => slot >= a && slot <= b),
  );
  return owner?.port ?? null;
}
