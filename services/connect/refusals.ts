/**
 * One-line reasons for a refused connection: a wrong password, an untrusted certificate, plain text
 * sent to a TLS port, an operation the ACL denies. Each names the dependency and the cause, and
 * never a secret; the codes are in libs/errors and the README's error-code table.
 */
import { StreamfenceError } from '../../libs/errors/index.js';
import type { KafkaSettings, RedisSettings } from './options.js';

/** The error and its causes (kafkajs wraps the real one in retries; node in `cause`). */
function chain(err: unknown): { name: string; message: string; type?: string; code?: string }[] {
  const out: { name: string; message: string; type?: string; code?: string }[] = [];
  let e = err as
    (Error & { cause?: unknown; originalError?: unknown; type?: string; code?: string }) | undefined;
  for (let i = 0; e && i < 6; i++) {
    out.push({ name: String(e.name ?? ''), message: String(e.message ?? e), type: e.type, code: e.code });
    // kafkajs reports per-topic failures (e.g. of createTopics) as an aggregate.
    const inner = (e as { errors?: unknown[] }).errors;
    if (Array.isArray(inner)) for (const x of inner.slice(0, 5)) out.push(...chain(x));
    e = (e.originalError ?? e.cause) as typeof e;
  }
  // Innermost first: the original cause words the reason best.
  return out.reverse();
}

const TLS_WORDS = /certificate|self[- ]signed|unable to verify|CERT_|SSL routines|wrong version number/i;

/** A typed refusal for a Kafka failure, or null when the cause is not one of the known refusals. */
export function kafkaRefusal(err: unknown, s: KafkaSettings, what = 'connect'): StreamfenceError | null {
  const all = chain(err);
  const at = s.brokers.join(',');
  if (all.some((e) => e.name === 'KafkaJSSASLAuthenticationError')) {
    const mech = (s.sasl?.mechanism ?? 'sasl').toUpperCase();
    return new StreamfenceError(
      'AUTH_FAILED',
      `kafka: authentication failed for user ${s.sasl?.username ?? '(none)'} (${mech}) at ${at}; check the user and password`,
    );
  }
  const denied = all.find((e) => /_AUTHORIZATION_FAILED$/.test(e.type ?? ''));
  // kafkajs drops the broker's GROUP_AUTHORIZATION_FAILED answer to FindCoordinator and reports
  // only that no coordinator was found; for an authenticated user that is the group ACL.
  const noCoordinator = s.sasl !== undefined && all.some((e) => e.name === 'KafkaJSGroupCoordinatorNotFound');
  if (denied || noCoordinator) {
    const kind = denied ? denied.type!.replace('_AUTHORIZATION_FAILED', '').toLowerCase() : 'group';
    return new StreamfenceError(
      'NOT_AUTHORISED',
      `kafka: not authorised to ${what} (${kind} ACL) for user ${s.sasl?.username ?? '(none)'}; grant the ACL or use another user`,
    );
  }
  const tls = all.find((e) => TLS_WORDS.test(e.message) || TLS_WORDS.test(e.code ?? ''));
  if (tls) {
    return new StreamfenceError(
      'TLS_FAILED',
      `kafka: TLS handshake with ${at} failed: ${tls.message}; check --kafka-ca-file and the broker's certificate`,
    );
  }
  if (!s.tls && all.some((e) => /Closed connection|Connection timeout|ECONNRESET/i.test(e.message))) {
    return new StreamfenceError(
      'TLS_FAILED',
      `kafka: ${at} closed the connection without answering; if its listener expects TLS or SASL, set --kafka-tls and the SASL options`,
    );
  }
  return null;
}

/** A typed refusal for a Redis failure, or null when the cause is not one of the known refusals. */
export function redisRefusal(err: unknown, s: RedisSettings): StreamfenceError | null {
  const all = chain(err);
  const u = new URL(s.url);
  const at = `${u.hostname}:${u.port || 6379}`;
  const user = s.username ?? (u.username ? decodeURIComponent(u.username) : 'default');
  if (all.some((e) => /WRONGPASS|NOAUTH/.test(e.message)))
    return new StreamfenceError(
      'AUTH_FAILED',
      `redis: authentication failed for user ${user} at ${at}; check the user and password`,
    );
  const noperm = all.find((e) => /NOPERM/.test(e.message));
  if (noperm)
    return new StreamfenceError(
      'NOT_AUTHORISED',
      `redis: not authorised for user ${user} at ${at}: ${noperm.message.replace(/^NOPERM\s*/, '')}; grant the ACL or use another user (or a key prefix the user may use)`,
    );
  const tls = all.find((e) => TLS_WORDS.test(e.message) || TLS_WORDS.test(e.code ?? ''));
  if (tls)
    return new StreamfenceError(
      'TLS_FAILED',
      `redis: TLS handshake with ${at} failed: ${tls.message}; check --redis-ca-file and the server's certificate`,
    );
  if (
    u.protocol === 'redis:' &&
    all.some((e) => /Connection is closed|ECONNRESET|socket hang up/i.test(e.message))
  )
    return new StreamfenceError(
      'TLS_FAILED',
      `redis: ${at} closed the connection; if it expects TLS, use a rediss:// URL`,
    );
  return null;
}
