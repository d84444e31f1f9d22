/**
 * The replay input address for a Kafka time range:
 *
 *   kafka://HOST:PORT[,HOST:PORT...]/TOPIC?from=TIME&to=TIME
 *
 * TIME is an ISO-8601 date-time with a zone (2026-03-01T06:00:00Z) or epoch milliseconds; the
 * range is [from, to) in Kafka message timestamps.
 */
import { parseTimestamp } from '../../libs/engine/reading.js';
import { StreamfenceError } from '../../libs/errors/index.js';

export interface KafkaRange {
  brokers: string[];
  topic: string;
  from: number;
  to: number;
}

export const KAFKA_URL_EXAMPLE =
  'kafka://127.0.0.1:9092/plant-readings?from=2026-03-01T06:00:00Z&to=2026-03-01T18:00:00Z';

export function isKafkaUrl(input: string): boolean {
  return input.toLowerCase().startsWith('kafka://');
}

export function parseKafkaUrl(input: string): KafkaRange {
  const bad = (why: string): StreamfenceError =>
    new StreamfenceError(
      'ARGS_INVALID',
      `bad Kafka input "${input}": ${why}; write it like ${KAFKA_URL_EXAMPLE}`,
    );
  const m = /^kafka:\/\/([^/?#]+)\/([^?#]+)(?:\?([^#]*))?$/i.exec(input.trim());
  if (m === null) throw bad('expected kafka://BROKERS/TOPIC?from=...&to=...');
  const brokers = m[1]
    .split(',')
    .map((b) => b.trim())
    .filter((b) => b.length > 0);
  if (brokers.length === 0 || brokers.some((b) => !/^[^:\s]+:\d{1,5}$/.test(b)))
    throw bad('brokers must be HOST:PORT, comma-separated');
  const topic = decodeURIComponent(m[2]);
  if (!/^[A-Za-z0-9._-]{1,249}$/.test(topic)) throw bad(`"${topic}" is not a valid topic name`);
  const q = new URLSearchParams(m[3] ?? '');
  const time = (name: 'from' | 'to'): number => {
    const v = q.get(name);
    if (v === null || v === '') throw bad(`${name}= is missing`);
    const t = parseTimestamp(v);
    if (!t.ok) throw bad(`${name}=${v}: ${t.detail}`);
    return t.ts;
  };
  const from = time('from');
  const to = time('to');
  if (from >= to) throw bad('from must be before to');
  for (const k of q.keys())
    if (k !== 'from' && k !== 'to') throw bad(`unknown parameter "${k}" (only from and to)`);
  return { brokers, topic, from, to };
}
