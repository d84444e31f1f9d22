/**
 * The connection layer: every command that talks to Kafka or Redis declares the options in
 * KAFKA_OPTIONS / REDIS_OPTIONS, reads them with readKafkaSettings / readRedisSettings and builds
 * its clients with buildKafka / buildRedis. Nothing else in services/ constructs a kafkajs or
 * ioredis client (eslint.config.js enforces it).
 */
export {
  KAFKA_OPTIONS,
  REDIS_OPTIONS,
  SASL_MECHANISMS,
  SECRET_ENV,
  connectionHelp,
  describeKafka,
  describeRedis,
  optionsHelp,
  parseArgsOptions,
  readKafkaSettings,
  readRedisSettings,
  redisTarget,
  type KafkaSettings,
  type OptionSpec,
  type OptionValues,
  type RedisSettings,
  type SaslMechanism,
} from './options.js';
export { buildKafka, kafkaConfig, type KafkaClientOptions } from './kafka.js';
export {
  buildRedis,
  clusterOptions,
  connectRedis,
  isClusterClient,
  redisAnswers,
  redisOptions,
  type RedisAnswer,
  type RedisClient,
  type RedisClientOptions,
} from './redis.js';
export { parseRedisUrl, redisAddresses, type RedisNode, type RedisTarget } from './redis-url.js';
export {
  kafkaFailure,
  kafkaRefusal,
  kafkaUnreachable,
  networkCause,
  redisFailure,
  redisRefusal,
  redisUnreachable,
  unreachableLine,
} from './refusals.js';
export { checkKafka, connectRedisOnce } from './preflight.js';
export { createTopicsWithLeaders } from './topics.js';
