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

const isDigit = (c: number) => c >= DIGIT_0 && c <= DIGIT_9;

function skipSpaces(s: string, i: number): number {
  while (s.charCodeAt(i) === SPACE) i++;
  return i;
}

/** End (exclusive) of a JSON string body starting after its opening quote, or -1 when it needs JSON.parse. */
function stringEnd(s: string, i: number): number {
  const n = s.length;
  for (; i < n; i++) {
    const c = s.charCodeAt(i);
    if (c === QUOTE) return i;
    // Escapes need decoding and raw control characters are invalid JSON: leave both to JSON.parse.
    if (c === BACKSLASH || c < SPACE) return -1;
  }
  return -1;
}

/** End (exclusive) of a JSON number (RFC 8259 grammar) starting at `i`, or -1. */
function numberEnd(s: string, i: number): number {
  if (s.charCodeAt(i) === MINUS) i++;
  const c0 = s.charCodeAt(i);
  if (c0 === DIGIT_0) i++;
  else if (isDigit(c0)) while (isDigit(s.charCodeAt(i))) i++;
  else return -1;
  if (s.charCodeAt(i) === DOT) {
    i++;
    if (!isDigit(s.charCodeAt(i))) return -1;
    while (isDigit(s.charCodeAt(i))) i++;
  }
  const e = s.charCodeAt(i);
  if (e === 101 || e === 69) {
    // e E
    i++;
    const sign = s.charCodeAt(i);
    if (sign === 43 || sign === MINUS) i++;
    if (!isDigit(s.charCodeAt(i))) return -1;
    while (isDigit(s.charCodeAt(i))) i++;
  }
  return i;
}

const POW10 = [
  1, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19,
  1e20, 1e21, 1e22,
];

/**
 * The double nearest to the JSON number text s[start, end). Plain decimals of at most 15
 * significant digits and 22 fraction digits are an exact integer divided by an exact power of
 * ten, which IEEE division rounds correctly (Clinger 1990, "How to read floating point numbers
 * accurately", the fast path); anything else goes to Number().
 */
function numberValue(s: string, start: number, end: number): number {
  let i = start;
  const negative = s.charCodeAt(i) === MINUS;
  if (negative) i++;
  let mantissa = 0;
  let digits = 0;
  let fractionDigits = 0;
  let inFraction = false;
  for (; i < end; i++) {
    const c = s.charCodeAt(i);
    if (c === DOT) {
      inFraction = true;
      continue;
    }
    if (!isDigit(c)) return Number(s.slice(start, end));
    mantissa = mantissa * 10 + (c - DIGIT_0);
    if (mantissa !== 0) digits++;
    if (inFraction) fractionDigits++;
  }
  if (digits > 15 || fractionDigits > 22) return Number(s.slice(start, end));
  const magnitude = mantissa / POW10[fractionDigits];
  return negative ? -magnitude : magnitude;
}

/** Which key the key text s[start, end) is: 0 sensor, 1 ts, 2 value, 3 quality, -1 another. */
function keyIndex(s: string, start: number, end: number): number {
  const len = end - start;
  if (len === 2) return s.charCodeAt(start) === 116 && s.charCodeAt(start + 1) === 115 ? 1 : -1;
  if (len === 5) {
    return s.charCodeAt(start) === 118 && // v
      s.charCodeAt(start + 1) === 97 && // a
      s.charCodeAt(start + 2) === 108 && // l
      s.charCodeAt(start + 3) === 117 && // u
      s.charCodeAt(start + 4) === 101 // e
      ? 2
      : -1;
  }
  if (len === 6) {
    return s.charCodeAt(start) === 115 && // s
      s.charCodeAt(start + 1) === 101 && // e
      s.charCodeAt(start + 2) === 110 && // n
      s.charCodeAt(start + 3) === 115 && // s
      s.charCodeAt(start + 4) === 111 && // o
      s.charCodeAt(start + 5) === 114 // r
      ? 0
      : -1;
  }
  if (len === 7) {
    return s.charCodeAt(start) === 113 && // q
      s.charCodeAt(start + 1) === 117 && // u
      s.charCodeAt(start + 2) === 97 && // a
      s.charCodeAt(start + 3) === 108 && // l
      s.charCodeAt(start + 4) === 105 && // i
      s.charCodeAt(start + 5) === 116 && // t
      s.charCodeAt(start + 6) === 121 // y
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
export function scanReadingObject(s: string, withSensor = true): ScannedFields | null {
  const n = s.length;
  if (s.charCodeAt(0) !== OPEN || s.charCodeAt(n - 1) !== CLOSE) return null;
  let sensor: string | number | undefined;
  let ts: string | number | undefined;
  let value: string | number | undefined;
  let quality: string | number | undefined;
  let seen = 0;
  let i = skipSpaces(s, 1);
  if (s.charCodeAt(i) === CLOSE) return i === n - 1 ? { sensor, ts, value, quality } : null;
  for (;;) {
    if (s.charCodeAt(i) !== QUOTE) return null;
    const keyEnd = stringEnd(s, i + 1);
    if (keyEnd < 0) return null;
    const key = keyIndex(s, i + 1, keyEnd);
    if (key < 0 || (seen & (1 << key)) !== 0) return null;
    seen |= 1 << key;
    i = skipSpaces(s, keyEnd + 1);
    if (s.charCodeAt(i) !== COLON) return null;
    i = skipSpaces(s, i + 1);
    let field: string | number;
    if (s.charCodeAt(i) === QUOTE) {
      const end = stringEnd(s, i + 1);
      if (end < 0) return null;
      // A string never read (the key supplies the sensor) is not copied.
      field = key === 0 && !withSensor ? '' : s.slice(i + 1, end);
      i = end + 1;
    } else {
      const end = numberEnd(s, i);
      if (end < 0) return null;
      // Correctly rounded to the nearest double, as JSON.parse does.
      field = numberValue(s, i, end);
      i = end;
    }
    if (key === 0) sensor = withSensor ? field : undefined;
    else if (key === 1) ts = field;
    else if (key === 2) value = field;
    else quality = field;
    i = skipSpaces(s, i);
    const c = s.charCodeAt(i);
    if (c === CLOSE) return i === n - 1 ? { sensor, ts, value, quality } : null;
    if (c !== COMMA) return null;
    i = skipSpaces(s, i + 1);
  }
}
