/**
 * What the integration globalSetup hands to test workers through vitest's provide/inject.
 * Kept in its own module so the setup (main process) and the helpers (workers) share one type.
 */
export type ServiceSource = 'env' | 'testcontainers' | 'local-stack';

export interface HarnessServices {
  /** Kafka bootstrap addresses, host:port. */
  brokers: string[];
  redisUrl: string;
  kafkaSource: ServiceSource;
  redisSource: ServiceSource;
}

declare module 'vitest' {
  export interface ProvidedContext {
    streamfenceServices: HarnessServices;
  }
}
