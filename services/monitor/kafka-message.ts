/**
 * Turning one Kafka message into a reading or a rejection record for the rejected topic.
 * The message key is the sensor id; a message without a key uses the payload's `sensor` field.
 */
import {
  LIMITS,
  parseJsonReading,
  validateFields,
  type ParseResult,
  type RejectReason,
} from '../../libs/engine/reading.js';
import { scanReadingObject } from '../../libs/engine/reading-scan.js';

export interface RejectionRecord {
  reason: RejectReason;
  detail: string;
  /** The original bytes as base64, and as text when they are valid UTF-8 (null otherwise). */
  raw: { base64: string; text: string | null };
  source: { topic: string; partition: number; offset: string };
  key: string | null;
}

const utf8 = new TextDecoder('utf-8', { fatal: true });

export function decodeUtf8(b: Buffer | null): string | null {
  if (b === null) return null;
  try {
    return utf8.decode(b);
  } catch {
    return null;
  }
}

export function parseMessage(key: Buffer | null, value: Buffer | null): ParseResult {
  if (value === null || value.length === 0)
    return { ok: false, reason: 'not_json', detail: 'message has no payload' };
  const text = decodeUtf8(value);
  if (text === null) return { ok: false, reason: 'not_json', detail: 'message payload is not UTF-8 text' };
  const keyText = key === null || key.length === 0 ? null : decodeUtf8(key);
  if (keyText === null) return parseJsonReading(text);
  if (text.length > LIMITS.maxLineLength) {
    return {
      ok: false,
      reason: 'line_too_long',
      detail: `message has ${text.length} characters; the limit is ${LIMITS.maxLineLength}`,
    };
  }
  // The key names the sensor: the payload's `sensor` is checked as JSON but not copied out.
  const fields = scanReadingObject(text, false);
  if (fields !== null) return validateFields(keyText, fields.ts, fields.value, false, fields.quality);
  let obj: unknown;
  try {
    obj = JSON.parse(text);
  } catch {
    return { ok: false, reason: 'not_json', detail: 'message payload is not valid JSON' };
  }
  if (typeof obj !== 'object' || obj === null || Array.isArray(obj)) {
    return {
      ok: false,
      reason: 'not_object',
      detail: 'a reading must be a JSON object {"sensor","ts","value"}',
    };
  }
  const o = obj as Record<string, unknown>;
  return validateFields(keyText, o.ts, o.value, false, o.quality);
}

export function rejectionRecord(
  reason: RejectReason,
  detail: string,
  m: { key: Buffer | null; value: Buffer | null; offset: string },
  topic: string,
  partition: number,
): RejectionRecord {
  const raw = m.value ?? Buffer.alloc(0);
  return {
    reason,
    detail,
    raw: { base64: raw.toString('base64'), text: decodeUtf8(raw) },
    source: { topic, partition, offset: m.offset },
    key: m.key === null ? null : (decodeUtf8(m.key) ?? m.key.toString('base64')),
  };
}
