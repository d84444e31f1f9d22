/**
 * Reading parser fuzzing: whatever arrives (random text, random bytes decoded as UTF-8, near-valid
 * JSON lines), parseJsonReading and validateFields never throw, and every rejection carries a
 * reason from REJECT_REASONS. Then one hand-made case per reason.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  LIMITS,
  parseJsonReading,
  REJECT_REASONS,
  validateFields,
  type ParseResult,
} from '../../../libs/engine/reading.js';

function wellFormed(r: ParseResult): void {
  if (r.ok) {
    expect(typeof r.reading.sensor).toBe('string');
    expect(Number.isFinite(r.reading.value)).toBe(true);
    expect(Number.isInteger(r.reading.ts)).toBe(true);
    expect(r.reading.ts).toBeGreaterThanOrEqual(LIMITS.minTs);
    expect(r.reading.ts).toBeLessThanOrEqual(LIMITS.maxTs);
  } else {
    expect(REJECT_REASONS).toContain(r.reason);
    expect(r.detail.length).toBeGreaterThan(0);
  }
}

const anyJson = fc.oneof(
  fc.string(),
  fc.double(),
  fc.integer(),
  fc.boolean(),
  fc.constant(null),
  fc.array(fc.integer(), { maxLength: 3 }),
  fc.constantFrom(
    '2026-05-01T08:00:00Z',
    '2026-05-01 08:00:00+02:00',
    '2026-02-30T00:00:00Z',
    '1e3',
    'NaN',
    '',
  ),
);

/** Objects close to a valid reading: each field valid, missing, or replaced by anything. */
const nearReading = fc.record(
  {
    sensor: fc.oneof(
      fc.constantFrom('mill-1/speed', ' ', '', 'a\u0007b', 'x'.repeat(201)),
      fc.string(),
      anyJson,
    ),
    ts: fc.oneof(fc.integer({ min: -1e3, max: 3e14 }), fc.double(), anyJson),
    value: fc.oneof(fc.double(), fc.integer(), anyJson),
    extra: anyJson,
  },
  { requiredKeys: [] },
);

describe('reading parser never throws (fuzz)', () => {
  it('random strings', () => {
    fc.assert(
      fc.property(fc.string({ unit: 'binary', maxLength: 300 }), (s) => wellFormed(parseJsonReading(s))),
      { numRuns: 2000 },
    );
  });
  it('random bytes decoded as UTF-8', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 300 }), (b) =>
        wellFormed(parseJsonReading(Buffer.from(b).toString('utf8'))),
      ),
      { numRuns: 2000 },
    );
  });
  it('near-valid JSON lines (and their truncations)', () => {
    const reasons = new Set<string>();
    fc.assert(
      fc.property(nearReading, fc.nat(), (o, cut) => {
        const line = JSON.stringify(o);
        const r = parseJsonReading(line);
        wellFormed(r);
        if (!r.ok) reasons.add(r.reason);
        wellFormed(parseJsonReading(line.slice(0, cut % (line.length + 1))));
      }),
      { numRuns: 3000 },
    );
    // The fuzz reached most rejection paths (late is the engine's, line_too_long is tested below).
    expect(reasons.size).toBeGreaterThanOrEqual(9);
  });
  it('validateFields with anything, from JSON or from text', () => {
    fc.assert(
      fc.property(fc.anything(), fc.anything(), fc.anything(), fc.boolean(), (s, t, v, text) =>
        wellFormed(validateFields(s, t, v, text)),
      ),
      { numRuns: 2000 },
    );
  });
});

describe('one case per rejection reason', () => {
  const reasonOf = (line: string) => {
    const r = parseJsonReading(line);
    return r.ok ? 'ok' : r.reason;
  };
  const ok = { sensor: 'mill-1/speed', ts: '2026-05-01T08:00:00Z', value: 3.5 };
  const line = (over: Record<string, unknown>) => JSON.stringify({ ...ok, ...over });

  it('accepts a valid reading (ISO with zone or epoch ms)', () => {
    const r = parseJsonReading(line({}));
    expect(r).toEqual({
      ok: true,
      reading: { sensor: 'mill-1/speed', ts: Date.UTC(2026, 4, 1, 8), value: 3.5 },
    });
    expect(reasonOf(line({ ts: 1777622400000 }))).toBe('ok');
    expect(reasonOf(line({ ts: '2026-05-01T10:00:00+02:00' }))).toBe('ok');
  });
  it.each([
    ['line_too_long', JSON.stringify({ ...ok, pad: 'x'.repeat(LIMITS.maxLineLength) })],
    ['not_json', '{"sensor": "a", '],
    ['not_object', '[1, 2, 3]'],
    ['not_object', '42'],
    ['sensor_missing', JSON.stringify({ ts: ok.ts, value: 1 })],
    ['sensor_missing', line({ sensor: 7 })],
    ['sensor_empty', line({ sensor: '   ' })],
    ['sensor_too_long', line({ sensor: 'x'.repeat(LIMITS.maxSensorLength + 1) })],
    ['sensor_bad_chars', line({ sensor: 'mill\n1' })],
    ['value_missing', line({ value: null })],
    ['value_not_number', line({ value: '3.5' })],
    ['value_not_number', line({ value: true })],
    ['ts_missing', JSON.stringify({ sensor: 'a', value: 1 })],
    ['ts_invalid', line({ ts: '2026-05-01T08:00:00' })],
    ['ts_invalid', line({ ts: '2026-02-30T00:00:00Z' })],
    ['ts_invalid', line({ ts: {} })],
    ['ts_out_of_range', line({ ts: -1 })],
    ['ts_out_of_range', line({ ts: LIMITS.maxTs + 1 })],
  ])('%s', (reason, text) => {
    expect(reasonOf(text)).toBe(reason);
  });
  it('value_not_finite comes from text sources (CSV): inf and nan words', () => {
    const r = validateFields('a', 0, 'inf', true);
    expect(r.ok ? 'ok' : r.reason).toBe('value_not_finite');
    const r2 = validateFields('a', 0, ' NaN ', true);
    expect(r2.ok ? 'ok' : r2.reason).toBe('value_not_finite');
    const r3 = validateFields('a', 0, Infinity);
    expect(r3.ok ? 'ok' : r3.reason).toBe('value_not_finite');
    const r4 = validateFields('a', 0, '', true);
    expect(r4.ok ? 'ok' : r4.reason).toBe('value_missing');
    const r5 = validateFields('a', '0', ' 2.5e1 ', true);
    expect(r5).toEqual({ ok: true, reading: { sensor: 'a', ts: 0, value: 25 } });
  });
});
