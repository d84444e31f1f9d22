/**
 * The character-code timestamp parser (libs/engine/iso-time.ts, used by parseTimestamp) against
 * two references:
 *  1. the previous implementation, kept here verbatim: a regular expression for the shape, then
 *     ECMAScript `Date.parse` (ECMA-262, "Date Time String Format", with V8's fallback for the
 *     `±hhmm` offset) and a days-in-month check, because Date.parse rolls 2026-02-30 over to March;
 *     over random valid, near-valid and invalid strings both must accept the same strings with the
 *     same time, and refuse the same strings with the same detail;
 *  2. `Date.UTC` (ECMA-262 MakeDay/MakeTime) on the components a date-time was built from.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { parseTimestamp, type RejectReason } from '../../../libs/engine/reading.js';
import { daysFromCivil, daysInMonth } from '../../../libs/engine/iso-time.js';

type TsResult = { ok: true; ts: number } | { ok: false; reason: RejectReason; detail: string };

/** Reference 1: the regular-expression and Date.parse implementation this parser replaced. */
function referenceParse(raw: string): TsResult {
  const ISO_RE = /^\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}(:\d{2}(\.\d{1,9})?)?(Z|[+-]\d{2}:?\d{2})$/i;
  const clip = (s: string) => (s.length > 40 ? `${s.slice(0, 40)}...` : s);
  let ts: number;
  const s = raw.trim();
  if (/^-?\d+(\.\d+)?$/.test(s)) {
    ts = Math.round(Number(s));
  } else {
    if (!ISO_RE.test(s)) {
      return {
        ok: false,
        reason: 'ts_invalid',
        detail: `timestamp "${clip(s)}" is not ISO-8601 with a zone (e.g. 2026-05-01T08:00:00Z) nor epoch milliseconds`,
      };
    }
    ts = Date.parse(s.replace(' ', 'T'));
    const ymd = /^(\d{4})-(\d{2})-(\d{2})/.exec(s)!;
    const dim = new Date(Date.UTC(Number(ymd[1]), Number(ymd[2]), 0)).getUTCDate();
    if (Number.isNaN(ts) || Number(ymd[3]) > dim) {
      return { ok: false, reason: 'ts_invalid', detail: `timestamp "${clip(s)}" is not a real date` };
    }
  }
  if (ts < 0 || ts > 253_402_300_799_999) {
    return { ok: false, reason: 'ts_out_of_range', detail: `timestamp ${ts} is outside 1970..9999` };
  }
  return { ok: true, ts };
}

const pad = (v: number, width: number) => String(v).padStart(width, '0');

/** Date-times built from components, valid or slightly out of range, in every accepted spelling. */
const components = fc.record({
  year: fc.oneof(fc.integer({ min: 1970, max: 2100 }), fc.integer({ min: 0, max: 9999 })),
  month: fc.oneof(fc.integer({ min: 1, max: 12 }), fc.integer({ min: 0, max: 99 })),
  day: fc.oneof(fc.integer({ min: 1, max: 31 }), fc.integer({ min: 0, max: 99 })),
  hour: fc.oneof(fc.integer({ min: 0, max: 23 }), fc.integer({ min: 0, max: 99 })),
  minute: fc.oneof(fc.integer({ min: 0, max: 59 }), fc.integer({ min: 0, max: 99 })),
  second: fc.option(fc.oneof(fc.integer({ min: 0, max: 59 }), fc.integer({ min: 0, max: 99 }))),
  fraction: fc.option(fc.stringMatching(/^[0-9]{0,11}$/)),
  sep: fc.constantFrom('T', 't', ' ', 'x', ''),
  zone: fc.oneof(
    fc.constantFrom('Z', 'z', '', 'UTC', '+', '+1'),
    fc.record({
      sign: fc.constantFrom('+', '-'),
      hours: fc.oneof(fc.integer({ min: 0, max: 23 }), fc.integer({ min: 0, max: 99 })),
      minutes: fc.oneof(fc.integer({ min: 0, max: 59 }), fc.integer({ min: 0, max: 99 })),
      colon: fc.boolean(),
    }),
  ),
  padding: fc.constantFrom('', ' ', '\t', ' \n'),
});

type Parts = typeof components extends fc.Arbitrary<infer T> ? T : never;

function spell(p: Parts): string {
  let s = `${pad(p.year, 4)}-${pad(p.month, 2)}-${pad(p.day, 2)}${p.sep}${pad(p.hour, 2)}:${pad(p.minute, 2)}`;
  if (p.second !== null) {
    s += `:${pad(p.second, 2)}`;
    if (p.fraction !== null) s += `.${p.fraction}`;
  }
  if (typeof p.zone === 'string') s += p.zone;
  else s += `${p.zone.sign}${pad(p.zone.hours, 2)}${p.zone.colon ? ':' : ''}${pad(p.zone.minutes, 2)}`;
  return p.padding + s + p.padding;
}

/** Random edits of a valid date-time: a character replaced, removed or inserted. */
const mutated = fc
  .tuple(
    components,
    fc.nat(40),
    fc.constantFrom('', '0', '9', '-', ':', '.', '+', 'T', 'Z', ' ', '\u0663', 'a'),
  )
  .map(([p, at, ch]) => {
    const s = spell(p);
    const i = at % (s.length + 1);
    return s.slice(0, i) + ch + s.slice(i + (ch === '' || at % 2 === 0 ? 1 : 0));
  });

describe('ISO-8601 timestamp parser', () => {
  it('agrees with the regular-expression and Date.parse reference on built date-times', () => {
    fc.assert(
      fc.property(components, (p) => {
        const s = spell(p);
        expect(parseTimestamp(s)).toEqual(referenceParse(s));
      }),
      { numRuns: 20_000 },
    );
  });

  it('agrees with the reference on edited date-times, epoch text and arbitrary strings', () => {
    const epochText = fc
      .tuple(fc.boolean(), fc.stringMatching(/^[0-9]{1,16}$/), fc.option(fc.stringMatching(/^[0-9]{0,4}$/)))
      .map(([neg, int, frac]) => `${neg ? '-' : ''}${int}${frac === null ? '' : `.${frac}`}`);
    fc.assert(
      fc.property(fc.oneof(mutated, epochText, fc.string({ maxLength: 40 })), (s) => {
        expect(parseTimestamp(s)).toEqual(referenceParse(s));
      }),
      { numRuns: 20_000 },
    );
  });

  it('gives Date.UTC of the components for valid date-times', () => {
    const valid = fc.record({
      year: fc.integer({ min: 1970, max: 9999 }),
      month: fc.integer({ min: 1, max: 12 }),
      day: fc.integer({ min: 1, max: 31 }),
      hour: fc.integer({ min: 0, max: 23 }),
      minute: fc.integer({ min: 0, max: 59 }),
      second: fc.integer({ min: 0, max: 59 }),
      fraction: fc.stringMatching(/^[0-9]{1,9}$/),
      offset: fc.integer({ min: -(23 * 60 + 59), max: 23 * 60 + 59 }),
    });
    fc.assert(
      fc.property(valid, (v) => {
        const day = Math.min(v.day, daysInMonth(v.year, v.month));
        const millis = Number(v.fraction.padEnd(3, '0').slice(0, 3));
        const sign = v.offset < 0 ? '-' : '+';
        const abs = Math.abs(v.offset);
        const text = `${pad(v.year, 4)}-${pad(v.month, 2)}-${pad(day, 2)}T${pad(v.hour, 2)}:${pad(v.minute, 2)}:${pad(v.second, 2)}.${v.fraction}${sign}${pad(Math.floor(abs / 60), 2)}:${pad(abs % 60, 2)}`;
        const expected =
          Date.UTC(v.year, v.month - 1, day, v.hour, v.minute, v.second, millis) - v.offset * 60_000;
        const got = parseTimestamp(text);
        if (expected < 0 || expected > 253_402_300_799_999) expect(got.ok).toBe(false);
        else expect(got).toEqual({ ok: true, ts: expected });
      }),
      { numRuns: 20_000 },
    );
  });

  it('counts days like Date.UTC across leap years and centuries', () => {
    // Date.UTC as the reference (ECMA-262 MakeDay); 1900 and 2100 are not leap years, 2000 is.
    for (const [y, m, d] of [
      [1970, 1, 1],
      [1900, 2, 28],
      [2000, 2, 29],
      [2100, 3, 1],
      [2024, 12, 31],
      [100, 3, 1],
      [9999, 12, 31],
    ]) {
      expect(daysFromCivil(y, m, d) * 86_400_000).toBe(Date.UTC(y, m - 1, d));
    }
  });

  it('keeps the documented edge cases', () => {
    // Written by hand from ISO 8601-1:2019 (24:00 is the end of a day) and the Gregorian calendar.
    const ok = (s: string, iso: string) =>
      expect(parseTimestamp(s)).toEqual({ ok: true, ts: Date.parse(iso) });
    ok('2026-05-01T08:00:00Z', '2026-05-01T08:00:00.000Z');
    ok('2026-05-01 08:00+02:00', '2026-05-01T06:00:00.000Z');
    ok('2026-05-01t08:00:00.123456789z', '2026-05-01T08:00:00.123Z');
    ok('2026-05-01T08:00:00.9999-0130', '2026-05-01T09:30:00.999Z');
    ok('2026-12-31T24:00:00Z', '2027-01-01T00:00:00.000Z');
    ok('2024-02-29T00:00:00Z', '2024-02-29T00:00:00.000Z');
    const bad = (s: string) => expect(parseTimestamp(s).ok).toBe(false);
    bad('2026-02-29T00:00:00Z');
    bad('2026-05-01T24:00:01Z');
    bad('2026-05-01T08:00:60Z');
    bad('2026-05-01T08:00:00+24:00');
    bad('2026-05-01T08:00:00');
    bad('2026-05-01T08:00:00.1234567890Z');
  });
});
