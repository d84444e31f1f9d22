/**
 * The Kafka addresses that have answered this process at least once. A broker that closes the
 * connection without a word can mean two things: at start-up (the address never answered) its
 * listener most likely expects TLS or SASL; later (it had answered) it went away, a connection
 * lost. refusals.ts asks this set to tell the two apart; kafka.ts fills it.
 */

const answered = new Set<string>();

/** Notes that the broker at `host:port` sent bytes back on a connection. */
export function noteKafkaAnswered(address: string): void {
  answered.add(address);
}

/** The addresses that have answered so far (read-only view). */
export const kafkaAnswered: ReadonlySet<string> = answered;
