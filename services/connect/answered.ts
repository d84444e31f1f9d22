/**
 * The Kafka and Redis addresses that have answered this process at least once. A server that
 * closes the connection without a word can mean two things: at start-up (the address never
 * answered) its port most likely expects TLS (or SASL); later (it had answered) it went away, a
 * connection lost. refusals.ts and outage.ts ask these sets to tell the two apart; kafka.ts and
 * redis.ts fill them.
 */

const kafka = new Set<string>();
const redis = new Set<string>();

/** Notes that the broker at `host:port` sent bytes back on a connection. */
export function noteKafkaAnswered(address: string): void {
  kafka.add(address);
}

/** The Kafka addresses that have answered so far (read-only view). */
export const kafkaAnswered: ReadonlySet<string> = kafka;

/**
 * Notes that the Redis at `address` (as `redisAddresses` writes it: "host:port", or a cluster's
 * seed list) became ready: it answered the handshake, TLS and AUTH included.
 */
export function noteRedisAnswered(address: string): void {
  redis.add(address);
}

/** The Redis addresses that have been ready at least once so far (read-only view). */
export const redisAnswered: ReadonlySet<string> = redis;
