/**
 * A Redis Cluster of a test's own (test/support/redis-cluster.ts: the real `stack-up.sh
 * --redis-cluster`, or `--redis-cluster-tls`, in a stack folder under test-artifacts/), reusing the
 * Kafka broker and Redis the harness found, so only the six cluster nodes start, on the test's
 * ports. Fails the test, never skips it, when the cluster cannot start.
 */
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { startRedisClusterStack, type StackRedisCluster } from '../support/redis-cluster.js';
import { kafkaBrokers, redisUrl } from './services.js';

export type { ClusterNodeLine, ClusterUser, StackRedisCluster } from '../support/redis-cluster.js';

const REPO_ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

/** Starts the six nodes on basePort..basePort+5 (bus ports basePort+10000..); tls: TLS and ACL users. */
export function startStackRedisCluster(
  basePort: number,
  o: { tls?: boolean } = {},
): Promise<StackRedisCluster> {
  return startRedisClusterStack({
    basePort,
    tls: o.tls,
    kafkaPort: /:(\d+)$/.exec(kafkaBrokers()[0])?.[1] ?? '9092',
    redisUrl: redisUrl(),
    parentDir: path.join(REPO_ROOT, 'test-artifacts', 'stacks'),
  });
}
