/**
 * Reading validation: every input line or message becomes either an accepted Reading or a
 * rejection with a stable reason code. Nothing is dropped without a reason.
 */
import { isEpochText, parseIsoTime } from './iso-time.js';
import { scanReadingObject } from './reading-scan.js';

/**
 * How far a reading can be trusted, as the source tags it (the OPC UA status-code classes that
 * plant historians also use). Only `good` readings are judged and learned.
 */
export const QUALITIES = ['good', 'uncertain', 'bad'] as const;

/** The quality class of a reading. */
export type Quality = (typeof QUALITIES)[number];

/** The quality classes other than `good`: readings of these are counted but not judged or learned. */
export type DoubtfulQuality = Exclude<Quality, 'good'>;

/** One validated sensor reading. */
export interface Reading {
  sensor: string;
  /** Event time, epoch milliseconds. */
  ts: number;
  value: number;
  /** Absent means `good`; the parsers set it only for `uncertain` and `bad` readings. */
  quality?: DoubtfulQuality;
}

/** Why an input line is not an accepted reading (kept with the line in rejected output). */
export type RejectReason =
  | 'line_too_long'
  | 'not_json'
  | 'not_object'
  | 'sensor_missing'
  | 'sensor_empty'
  | 'sensor_too_long'
  | 'sensor_bad_chars'
  | 'value_missing'
  | 'value_not_number'
  | 'value_not_finite'
  | 'ts_missing'
  | 'ts_invalid'
  | 'ts_out_of_range'
  | 'quality_invalid'
  | 'late'
  | 'sensor_limit';

/** Every reject reason, in the order the README lists them. */
export const REJECT_REASONS: readonly RejectReason[] = [
  'line_too_long',
  'not_json',
  'not_object',
  'sensor_missing',
  'sensor_empty',
  'sensor_too_long',
  'sensor_bad_chars',
  'value_missing',
  'value_not_number',
  'value_not_finite',
  'ts_missing',
  'ts_invalid',
  'ts_out_of_range',
  'quality_invalid',
  'late',
  'sensor_limit',
];

/** Documented input limits. */
export const LIMITS = {
  /** Longest accepted input line or message, in characters. */
  maxLineLength: 65_536,
  /** Longest sensor id, in characters. */
  maxSensorLength: 200,
  /** Accepted event times: 1970-01-01T00:00:00Z up to 9999-12-31T23:59:59.999Z. */
  minTs: 0,
  maxTs: 253_402_300_799_999,
} as const;

/** A parsed reading, or the reason and detail of the refusal. */
export type ParseResult =
  { ok: true; reading: Reading } | { ok: false; reason: RejectReason; detail: string };

const reject = (reason: RejectReason, detail: string): ParseResult => ({ ok: false, reason, detail });

/**
 * Whether trim() could change `s`: its first or last character is at most U+0020 or beyond
 * U+007E (where the other white space of String.prototype.trim lives). Saves a trim per reading.
 */
function hasEdgeSpace(text: string): boolean {
  if (text.length === 0) return false;
  const first = text.charCodeAt(0);
  const last = text.charCodeAt(text.length - 1);
  return first <= 32 || first > 126 || last <= 32 || last > 126;
}

/** C0 and C1 control characters (and DEL) are refused in sensor ids: they break logs, terminals and keys. */
function hasControlChars(text: string): boolean {
  for (let index = 0; index < text.length; index++) {
    const code = text.charCodeAt(index);
    if (code <= 0x1f || (code >= 0x7f && code <= 0x9f)) return true;
  }
  return false;
}

/** ASCII digit test for the decimal scanner below. */
function isAsciiDigit(code: number): boolean {
  return code >= 48 && code <= 57;
}

/** Index after the ASCII digits starting at `start`. */
function digitsEnd(text: string, start: number, end: number): number {
  let position = start;
  while (position < end && isAsciiDigit(text.charCodeAt(position))) position++;
  return position;
}

/**
 * Whether a text cell is a plain decimal number, optionally signed, with an optional exponent and
 * surrounding white space: what `/^\s*[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?\s*$/` accepts (the
 * rule CSV values have always followed), by character codes: CSV replays spent a regular-expression
 * match per row here.
 */
export function isDecimalText(text: string): boolean {
  // String.prototype.trim removes exactly the white space `\s` matches (ECMA-262 WhiteSpace and
  // LineTerminator), so trimming first keeps the rule.
  const body = hasEdgeSpace(text) ? text.trim() : text;
  const end = body.length;
  let position = 0;
  const sign = body.charCodeAt(0);
  if (sign === 43 || sign === 45) position++; // + -
  const intEnd = digitsEnd(body, position, end);
  const hasInt = intEnd > position;
  position = intEnd;
  if (body.charCodeAt(position) === 46) {
    // .
    const fracEnd = digitsEnd(body, position + 1, end);
    if (!hasInt && fracEnd === position + 1) return false;
    position = fracEnd;
  } else if (!hasInt) {
    return false;
  }
  const exponent = body.charCodeAt(position);
  if (exponent === 101 || exponent === 69) {
    // e E
    position++;
    const expSign = body.charCodeAt(position);
    if (expSign === 43 || expSign === 45) position++;
    const expEnd = digitsEnd(body, position, end);
    if (expEnd === position) return false;
    position = expEnd;
  }
  return position === end;
}

/**
 * Event time of a reading: epoch milliseconds (number or decimal text, rounded) or an ISO-8601
 * date-time with an explicit zone (a time without a zone would be read in the host's zone, so two
 * machines could disagree about the same reading); see iso-time.ts for the accepted forms.
 */
export function parseTimestamp(
  raw: unknown,
): { ok: true; ts: number } | { ok: false; reason: RejectReason; detail: string } {
  let ts: number;
  if (typeof raw === 'number') {
    if (!Number.isFinite(raw))
      return { ok: false, reason: 'ts_invalid', detail: 'timestamp is not a finite number' };
    ts = Math.round(raw);
  } else if (typeof raw === 'string') {
    const trimmed = hasEdgeSpace(raw) ? raw.trim() : raw;
    if (isEpochText(trimmed)) {
      ts = Math.round(Number(trimmed));
    } else {
      const parsed = parseIsoTime(trimmed);
      if (parsed === 'structure') {
        return {
          ok: false,
          reason: 'ts_invalid',
          detail: `timestamp "${clip(trimmed)}" is not ISO-8601 with a zone (e.g. 2026-05-01T08:00:00Z) nor epoch milliseconds`,
        };
      }
      if (parsed === 'value') {
        return { ok: false, reason: 'ts_invalid', detail: `timestamp "${clip(trimmed)}" is not a real date` };
      }
      ts = parsed;
    }
  } else if (raw === undefined || raw === null) {
    return { ok: false, reason: 'ts_missing', detail: 'field "ts" is missing' };
  } else {
    return {
      ok: false,
      reason: 'ts_invalid',
      detail: 'field "ts" must be an ISO-8601 string or epoch milliseconds',
    };
  }
  if (ts < LIMITS.minTs || ts > LIMITS.maxTs) {
    return { ok: false, reason: 'ts_out_of_range', detail: `timestamp ${ts} is outside 1970..9999` };
  }
  return { ok: true, ts };
}

/** Validate the fields, whatever the container (JSON object or CSV row); `quality` undefined = good. */
export function validateFields(
  sensor: unknown,
  ts: unknown,
  value: unknown,
  valueFromText = false,
  quality: unknown = undefined,
): ParseResult {
  if (sensor === undefined || sensor === null) return reject('sensor_missing', 'field "sensor" is missing');
  if (typeof sensor !== 'string') return reject('sensor_missing', 'field "sensor" must be a string');
  if (sensor.length === 0 || (hasEdgeSpace(sensor) && sensor.trim().length === 0))
    return reject('sensor_empty', 'field "sensor" is empty');
  if (sensor.length > LIMITS.maxSensorLength) {
    return reject(
      'sensor_too_long',
      `sensor id has ${sensor.length} characters; the limit is ${LIMITS.maxSensorLength}`,
    );
  }
  if (hasControlChars(sensor)) return reject('sensor_bad_chars', 'sensor id contains control characters');

  let numeric: number;
  if (value === undefined || value === null || (valueFromText && value === '')) {
    return reject('value_missing', 'field "value" is missing');
  }
  if (typeof value === 'number') {
    numeric = value;
  } else if (valueFromText && typeof value === 'string' && isDecimalText(value)) {
    numeric = Number(value);
  } else if (valueFromText && typeof value === 'string' && /^\s*[-+]?(inf|infinity|nan)\s*$/i.test(value)) {
    return reject('value_not_finite', `value "${clip(value)}" is not a finite number`);
  } else {
    return reject('value_not_number', `field "value" must be a number, got ${describe(value)}`);
  }
  if (!Number.isFinite(numeric)) return reject('value_not_finite', 'value is not a finite number');

  const time = parseTimestamp(ts);
  if (!time.ok) return time;
  if (quality === undefined || quality === 'good')
    return { ok: true, reading: { sensor, ts: time.ts, value: numeric } };
  if (quality === 'uncertain' || quality === 'bad')
    return { ok: true, reading: { sensor, ts: time.ts, value: numeric, quality } };
  return reject(
    'quality_invalid',
    `field "quality" must be "good", "uncertain" or "bad" (or left out for good), got ${describe(quality)}`,
  );
}

/** Parse one NDJSON line or one message payload. Never throws. */
export function parseJsonReading(line: string): ParseResult {
  if (line.length > LIMITS.maxLineLength) {
    return reject(
      'line_too_long',
      `line has ${line.length} characters; the limit is ${LIMITS.maxLineLength}`,
    );
  }
  const fields = scanReadingObject(line);
  if (fields !== null) return validateFields(fields.sensor, fields.ts, fields.value, false, fields.quality);
  let parsed: unknown;
  try {
    parsed = JSON.parse(line);
  } catch {
    return reject('not_json', 'line is not valid JSON');
  }
  if (typeof parsed !== 'object' || parsed === null || Array.isArray(parsed)) {
    return reject('not_object', 'a reading must be a JSON object {"sensor","ts","value"}');
  }
  const record = parsed as Record<string, unknown>;
  return validateFields(record.sensor, record.ts, record.value, false, record.quality);
}

function clip(text: string): string {
  return text.length > 40 ? `${text.slice(0, 40)}...` : text;
}

function describe(value: unknown): string {
  if (typeof value === 'string') return `the string "${clip(value)}"`;
  if (typeof value === 'boolean') return 'a boolean';
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'an array';
  return typeof value;
}
