/**
 * A fast path for the reading objects producers actually send: a flat JSON object whose only keys
 * are "sensor", "ts", "value" and the optional "quality" (each at most once), with plain strings (no escapes) and numbers
 * as values, and optional spaces between tokens, e.g. {"sensor":"p-1","ts":"2026-05-01T08:00:00Z","value":4.2}.
 * It reads the fields by character codes instead of building an object with JSON.parse.
 * Anything else (escapes, other keys, duplicates, nested values, true/false/null, odd white
 * space) returns null and the caller falls back to JSON.parse, so the result is always the one
 * JSON.parse would give.
 */

/** The fields as JSON.parse would return them (undefined when a key is absent). */
export interface ScannedFields {
  sensor: string | number | undefined;
  ts: string | number | undefined;
  value: string | number | undefined;
  quality: string | number | undefined;
}

const QUOTE = 34;
const BACKSLASH = 92;
const SPACE = 32;
const COMMA = 44;
const COLON = 58;
const OPEN = 123;
const CLOSE = 125;
const MINUS = 45;
const DOT = 46;
const DIGIT_0 = 48;
const DIGIT_9 = 57;

const isDigit = (code: number) => code >= DIGIT_0 && code <= DIGIT_9;

function skipSpaces(text: string, position: number): number {
  while (text.charCodeAt(position) === SPACE) position++;
  return position;
}

/** End (exclusive) of a JSON string body starting after its opening quote, or -1 when it needs JSON.parse. */
function stringEnd(text: string, position: number): number {
  const length = text.length;
  for (; position < length; position++) {
    const code = text.charCodeAt(position);
    if (code === QUOTE) return position;
    // Escapes need decoding and raw control characters are invalid JSON: leave both to JSON.parse.
    if (code === BACKSLASH || code < SPACE) return -1;
  }
  return -1;
}

/** End (exclusive) of a JSON number (RFC 8259 grammar) starting at `position`, or -1. */
function numberEnd(text: string, position: number): number {
  if (text.charCodeAt(position) === MINUS) position++;
  const first = text.charCodeAt(position);
  if (first === DIGIT_0) position++;
  else if (isDigit(first)) while (isDigit(text.charCodeAt(position))) position++;
  else return -1;
  if (text.charCodeAt(position) === DOT) {
    position++;
    if (!isDigit(text.charCodeAt(position))) return -1;
    while (isDigit(text.charCodeAt(position))) position++;
  }
  const exponentMark = text.charCodeAt(position);
  if (exponentMark === 101 || exponentMark === 69) {
    // e E
    position++;
    const sign = text.charCodeAt(position);
    if (sign === 43 || sign === MINUS) position++;
    if (!isDigit(text.charCodeAt(position))) return -1;
    while (isDigit(text.charCodeAt(position))) position++;
  }
  return position;
}

const POW10 = [
  1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19,
  1e20, 1e21, 1e22,
];

/**
 * The double nearest to the JSON number text[start, end). Plain decimals of at most 15
 * significant digits and 22 fraction digits are an exact integer divided by an exact power of
 * ten, which IEEE division rounds correctly (Clinger 1990, "How to read floating point numbers
 * accurately", the fast path); anything else goes to Number().
 */
function numberValue(text: string, start: number, end: number): number {
  let position = start;
  const negative = text.charCodeAt(position) === MINUS;
  if (negative) position++;
  let mantissa = 0;
  let digits = 0;
  let fractionDigits = 0;
  let inFraction = false;
  for (; position < end; position++) {
    const code = text.charCodeAt(position);
    if (code === DOT) {
      inFraction = true;
      continue;
    }
    if (!isDigit(code)) return Number(text.slice(start, end));
    mantissa = mantissa * 10 + (code - DIGIT_0);
    if (mantissa !== 0) digits++;
    if (inFraction) fractionDigits++;
  }
  if (digits > 15 || fractionDigits > 22) return Number(text.slice(start, end));
  const magnitude = mantissa / POW10[fractionDigits];
  return negative ? -magnitude : magnitude;
}

/** Which key the key text[start, end) is: 0 sensor, 1 ts, 2 value, 3 quality, -1 another. */
function keyIndex(text: string, start: number, end: number): number {
  const len = end - start;
  if (len === 2) return text.charCodeAt(start) === 116 && text.charCodeAt(start + 1) === 115 ? 1 : -1;
  if (len === 5) {
    return text.charCodeAt(start) === 118 && // v
      text.charCodeAt(start + 1) === 97 && // a
      text.charCodeAt(start + 2) === 108 && // l
      text.charCodeAt(start + 3) === 117 && // u
      text.charCodeAt(start + 4) === 101 // e
      ? 2
      : -1;
  }
  if (len === 6) {
    return text.charCodeAt(start) === 115 && // s
      text.charCodeAt(start + 1) === 101 && // e
      text.charCodeAt(start + 2) === 110 && // n
      text.charCodeAt(start + 3) === 115 && // s
      text.charCodeAt(start + 4) === 111 && // o
      text.charCodeAt(start + 5) === 114 // r
      ? 0
      : -1;
  }
  if (len === 7) {
    return text.charCodeAt(start) === 113 && // q
      text.charCodeAt(start + 1) === 117 && // u
      text.charCodeAt(start + 2) === 97 && // a
      text.charCodeAt(start + 3) === 108 && // l
      text.charCodeAt(start + 4) === 105 && // i
      text.charCodeAt(start + 5) === 116 && // t
      text.charCodeAt(start + 6) === 121 // y
      ? 3
      : -1;
  }
  return -1;
}

/**
 * The fields of a reading object in the common form, or null when JSON.parse must decide.
 * `withSensor` false (the Kafka message key names the sensor): the `sensor` field is still checked
 * as JSON but not copied out, and comes back undefined; whether the scan accepts is unchanged.
 */
export function scanReadingObject(text: string, withSensor = true): ScannedFields | null {
  const length = text.length;
  if (text.charCodeAt(0) !== OPEN || text.charCodeAt(length - 1) !== CLOSE) return null;
  let sensor: string | number | undefined;
  let ts: string | number | undefined;
  let value: string | number | undefined;
  let quality: string | number | undefined;
  let seen = 0;
  let position = skipSpaces(text, 1);
  if (text.charCodeAt(position) === CLOSE)
    return position === length - 1 ? { sensor, ts, value, quality } : null;
  for (;;) {
    if (text.charCodeAt(position) !== QUOTE) return null;
    const keyEnd = stringEnd(text, position + 1);
    if (keyEnd < 0) return null;
    const key = keyIndex(text, position + 1, keyEnd);
    if (key < 0 || (seen & (1 << key)) !== 0) return null;
    seen |= 1 << key;
    position = skipSpaces(text, keyEnd + 1);
    if (text.charCodeAt(position) !== COLON) return null;
    position = skipSpaces(text, position + 1);
    let field: string | number;
    if (text.charCodeAt(position) === QUOTE) {
      const end = stringEnd(text, position + 1);
      if (end < 0) return null;
      // A string never read (the key supplies the sensor) is not copied.
      field = key === 0 && !withSensor ? '' : text.slice(position + 1, end);
      position = end + 1;
    } else {
      const end = numberEnd(text, position);
      if (end < 0) return null;
      // Correctly rounded to the nearest double, as JSON.parse does.
      field = numberValue(text, position, end);
      position = end;
    }
    if (key === 0) sensor = withSensor ? field : undefined;
    else if (key === 1) ts = field;
    else if (key === 2) value = field;
    else quality = field;
    position = skipSpaces(text, position);
    const code = text.charCodeAt(position);
    if (code === CLOSE) return position === length - 1 ? { sensor, ts, value, quality } : null;
    if (code !== COMMA) return null;
    position = skipSpaces(text, position + 1);
  }
}
