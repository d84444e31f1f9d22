/**
 * The reading-object fast path (libs/engine/reading-scan.ts) against JSON.parse (ECMA-262
 * JSON.parse, RFC 8259 grammar) as the reference: whenever the scan answers, its three fields are
 * exactly (Object.is) what JSON.parse gives (the optional "quality" included), and parseJsonReading gives the same result and detail
 * as JSON.parse followed by the field validation, over random reading-like lines, their edits and
 * arbitrary JSON.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { parseJsonReading, validateFields, type ParseResult } from '../../../libs/engine/reading.js';
import { scanReadingObject } from '../../../libs/engine/reading-scan.js';

/** The reference: what parseJsonReading did before the fast path (line length aside). */
function referenceParse(line: string): ParseResult {
  let obj: unknown;
  try {
    obj = JSON.parse(line);
  } catch {
    return { ok: false, reason: 'not_json', detail: 'line is not valid JSON' };
  }
  if (typeof obj !== 'object' || obj === null || Array.isArray(obj)) {
    return {
      ok: false,
      reason: 'not_object',
      detail: 'a reading must be a JSON object {"sensor","ts","value"}',
    };
  }
  const o = obj as Record<string, unknown>;
  return validateFields(o.sensor, o.ts, o.value, false, o.quality);
}

const fieldValue = fc.oneof(
  fc.string({ maxLength: 12 }),
  fc.string({ unit: 'binary', maxLength: 6 }),
  fc.constantFrom(
    '2026-05-01T08:00:00Z',
    '2026-05-01 08:00:00.5+02:00',
    'mill-1/speed',
    'good',
    'uncertain',
    'bad',
    'Bad',
    'a\\"b',
    '\u0085x',
    '',
  ),
  fc.double(),
  fc.integer(),
  fc.constantFrom(0, -0, 1e308, Number.POSITIVE_INFINITY, 5e-324, 1767225600000),
  fc.boolean(),
  fc.constant(null),
  fc.array(fc.integer(), { maxLength: 2 }),
);

/** A reading-like object: any subset of the four keys, sometimes another key, in random order. */
const readingLike = fc
  .tuple(
    fc.record(
      {
        sensor: fieldValue,
        ts: fieldValue,
        value: fieldValue,
        quality: fieldValue,
        other: fieldValue,
      },
      { requiredKeys: [] },
    ),
    fc.constantFrom('', ' ', '  '),
    fc.boolean(),
  )
  .map(([o, gap, reversed]) => {
    const entries = Object.entries(o).map(([k, v]) => [k === 'other' ? 'unit' : k, v] as const);
    if (reversed) entries.reverse();
    const body = entries.map(([k, v]) => `${JSON.stringify(k)}:${gap}${JSON.stringify(v)}`).join(`,${gap}`);
    return `{${gap}${body}${gap}}`;
  });

/** Hand-spelled numbers, valid and not, as JSON.parse's grammar sees them. */
const numberText = fc.oneof(
  fc.stringMatching(/^-?(0|[1-9][0-9]{0,5})(\.[0-9]{1,4})?([eE][-+]?[0-9]{1,3})?$/),
  fc.stringMatching(/^[-+.0-9eE]{1,8}$/),
);
const spelledNumbers = fc
  .tuple(numberText, numberText)
  .map(([ts, value]) => `{"sensor":"s-1","ts":${ts},"value":${value}}`);

/** One character inserted, removed or replaced somewhere in a reading-like line. */
const edited = fc
  .tuple(
    readingLike,
    fc.nat(80),
    fc.constantFrom('', '"', '\\', ',', ':', '}', '{', ' ', '\t', '0', '-', 'e', '\n'),
  )
  .map(([s, at, ch]) => {
    const i = at % (s.length + 1);
    return s.slice(0, i) + ch + s.slice(i + (at % 3 === 0 ? 0 : 1));
  });

describe('reading-object fast path', () => {
  it('gives exactly the fields JSON.parse gives, or leaves the line to JSON.parse', () => {
    fc.assert(
      fc.property(fc.oneof(readingLike, spelledNumbers, edited), (line) => {
        const scanned = scanReadingObject(line);
        if (scanned === null) return;
        const parsed = JSON.parse(line) as Record<string, unknown>;
        expect(
          Object.keys(parsed).every((k) => k === 'sensor' || k === 'ts' || k === 'value' || k === 'quality'),
        ).toBe(true);
        for (const k of ['sensor', 'ts', 'value', 'quality'] as const)
          expect(Object.is(scanned[k], parsed[k])).toBe(true);
      }),
      { numRuns: 30_000 },
    );
  });

  it('without the sensor (a Kafka key names it) accepts the same lines and gives the same other fields', () => {
    fc.assert(
      fc.property(fc.oneof(readingLike, spelledNumbers, edited), (line) => {
        const full = scanReadingObject(line);
        const keyed = scanReadingObject(line, false);
        if (full === null) {
          expect(keyed).toBeNull();
          return;
        }
        expect(keyed).toEqual({ ...full, sensor: undefined });
      }),
      { numRuns: 30_000 },
    );
  });

  it('parseJsonReading gives the result of JSON.parse and validation', () => {
    fc.assert(
      fc.property(
        fc.oneof(readingLike, spelledNumbers, edited, fc.json(), fc.string({ maxLength: 30 })),
        (line) => {
          expect(parseJsonReading(line)).toEqual(referenceParse(line));
        },
      ),
      { numRuns: 30_000 },
    );
  });

  it('takes the common producer forms', () => {
    // Common practice: JSON.stringify output and Python json.dumps output (", " and ": ").
    for (const line of [
      '{"sensor":"pump-1/flow","ts":"2026-05-01T08:00:00.000Z","value":12.5}',
      '{"ts": 1767225600000, "value": -0.25, "sensor": "pump-1/flow"}',
      '{"sensor":"pump-1/flow","ts":"2026-05-01T08:00:00Z","value":1e-3}',
      '{"sensor":"pump-1/flow","ts":"2026-05-01T08:00:00Z","value":4.5,"quality":"uncertain"}',
    ]) {
      expect(scanReadingObject(line)).not.toBeNull();
      expect(parseJsonReading(line)).toEqual(referenceParse(line));
    }
    for (const line of [
      '{"sensor":"pump-\\u0031","ts":1,"value":1}',
      '{"sensor":"a","ts":1,"value":1,"value":2}',
      '{"sensor":"a","ts":1,"value":01}',
      ' {"sensor":"a","ts":1,"value":1}',
      '{"sensor":"a","ts":1,"value":true}',
      '{"sensor":"a","ts":1,"value":1,"quality":"bad","quality":"good"}',
    ]) {
      expect(scanReadingObject(line)).toBeNull();
    }
  });
});
