/**
 * The one list of environment variables the streamfence service reads. Code reads them through these
 * names only; test/unit/compose.test.ts checks docker-compose.yml against this list, so adding a
 * variable here (and reading it) is how a new setting becomes part of the deployment contract.
 */
export const ENV = {
  /** Kafka bootstrap servers, comma-separated host:port. */
  brokers: 'STREAMFENCE_BROKERS',
  /** Redis connection URL for detector state, e.g. redis://127.0.0.1:6379. */
  redisUrl: 'STREAMFENCE_REDIS_URL',
  /** Prefix of every Redis key the monitor writes, so several monitors can share one Redis. */
  statePrefix: 'STREAMFENCE_STATE_PREFIX',
  /** TCP port of the Prometheus metrics endpoint. */
  metricsPort: 'STREAMFENCE_METRICS_PORT',
} as const;

export type EnvKey = keyof typeof ENV;
export type EnvName = (typeof ENV)[EnvKey];

export const ENV_NAMES: readonly EnvName[] = Object.values(ENV);

export const DEFAULT_METRICS_PORT = 9321;
export const DEFAULT_KAFKA_PORT = 9092;
export const DEFAULT_REDIS_PORT = 6379;
