import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { LineSplitter, isBlank } from '../../../libs/formats/lines.js';
import { parseCsvHeader, parseCsvReading, splitCsvLine } from '../../../libs/formats/csv.js';
import { LIMITS, parseJsonReading } from '../../../libs/engine/reading.js';

function splitAll(chunks: string[], max = 1000): { line: string; no: number; len: number }[] {
  const out: { line: string; no: number; len: number }[] = [];
  const s = new LineSplitter(max);
  const sink = (line: string, no: number, len: number) => out.push({ line, no, len });
  for (const c of chunks) s.feed(c, sink);
  s.end(sink);
  return out;
}

describe('LineSplitter', () => {
  it('splits LF and CRLF lines, numbers them from 1 and keeps a last line without newline', () => {
    const got = splitAll(['a\r\nbb\n', '\nccc']);
    expect(got.map((g) => g.line)).toEqual(['a', 'bb', '', 'ccc']);
    expect(got.map((g) => g.no)).toEqual([1, 2, 3, 4]);
  });

  it('strips a UTF-8 BOM at the start of the text only', () => {
    expect(splitAll(['\uFEFFsensor,ts\n\uFEFFx']).map((g) => g.line)).toEqual(['sensor,ts', '\uFEFFx']);
  });

  it('gives the same lines whatever the chunk boundaries (property)', () => {
    fc.assert(
      fc.property(
        fc.string({ unit: fc.constantFrom('a', 'b', ',', '"', '\n', '\r', ' ', 'é') }),
        fc.array(fc.nat(), { maxLength: 8 }),
        (text, cuts) => {
          const points = [...new Set(cuts.map((c) => c % (text.length + 1)))].sort((x, y) => x - y);
          const chunks: string[] = [];
          let prev = 0;
          for (const p of points) {
            chunks.push(text.slice(prev, p));
            prev = p;
          }
          chunks.push(text.slice(prev));
          const expected = text.split('\n').map((l) => (l.endsWith('\r') ? l.slice(0, -1) : l));
          if (text.endsWith('\n') || text === '') expected.pop();
          expect(splitAll(chunks).map((g) => g.line)).toEqual(expected);
        },
      ),
      { numRuns: 300, seed: 11 },
    );
  });

  it('keeps only the head of an over-long line and reports its full length', () => {
    const long = 'x'.repeat(50);
    const got = splitAll(['ok\n' + long.slice(0, 20), long.slice(20, 35), long.slice(35) + '\r\nnext'], 10);
    expect(got[0]).toEqual({ line: 'ok', no: 1, len: 2 });
    expect(got[1].line).toBe('x'.repeat(10));
    expect(got[1].len).toBeGreaterThanOrEqual(50);
    expect(got[2]).toEqual({ line: 'next', no: 3, len: 4 });
  });

  it('treats empty and whitespace-only lines as blank', () => {
    expect([isBlank(''), isBlank('  \t'), isBlank('\u00a0'), isBlank(' x'), isBlank('x')]).toEqual([
      true,
      true,
      true,
      false,
      false,
    ]);
  });
});

describe('CSV fields', () => {
  it('splits plain rows and stops at the requested number of fields', () => {
    expect(splitCsvLine('a,b,,d')).toEqual(['a', 'b', '', 'd']);
    expect(splitCsvLine('a,b,c,d', 2)).toEqual(['a', 'b']);
  });

  it('handles quoted fields with commas and doubled quotes (RFC 4180)', () => {
    expect(splitCsvLine('"plant, north",2026-01-01T00:00:00Z,"1.5","say ""hi"""')).toEqual([
      'plant, north',
      '2026-01-01T00:00:00Z',
      '1.5',
      'say "hi"',
    ]);
    expect(splitCsvLine('"",x')).toEqual(['', 'x']);
  });

  it('is lenient with an unterminated quote (runs to the end of the line)', () => {
    expect(splitCsvLine('a,"b,c')).toEqual(['a', 'b,c']);
  });

  it('finds the required columns in any order, ignoring case, spaces and extra columns', () => {
    const h = parseCsvHeader(' Value ,unit,TS,sensor,note');
    expect(h).toEqual({ ok: true, columns: { sensor: 3, ts: 2, value: 0, quality: -1, needed: 4 } });
    const bad = parseCsvHeader('sensor,time,value');
    expect(bad.ok).toBe(false);
    if (!bad.ok) expect(bad.message).toContain('missing: ts');
  });

  it('turns a row into a reading, with empty or absent cells as missing fields', () => {
    const h = parseCsvHeader('ts,sensor,value,unit');
    if (!h.ok) throw new Error('header');
    const c = h.columns;
    expect(parseCsvReading('2026-01-01T00:00:00Z,"a/b, c",12.5,degC', c)).toEqual({
      ok: true,
      reading: { sensor: 'a/b, c', ts: Date.parse('2026-01-01T00:00:00Z'), value: 12.5 },
    });
    expect(parseCsvReading('1767225600000,a,  -3e2 ', c)).toMatchObject({
      ok: true,
      reading: { value: -300 },
    });
    expect(parseCsvReading(',a,1', c)).toMatchObject({ ok: false, reason: 'ts_missing' });
    expect(parseCsvReading('2026-01-01T00:00:00Z,a', c)).toMatchObject({
      ok: false,
      reason: 'value_missing',
    });
    expect(parseCsvReading('2026-01-01T00:00:00Z', c)).toMatchObject({ ok: false, reason: 'sensor_missing' });
    expect(parseCsvReading('2026-01-01T00:00:00Z,a,NaN', c)).toMatchObject({
      ok: false,
      reason: 'value_not_finite',
    });
    expect(parseCsvReading('x'.repeat(LIMITS.maxLineLength + 1), c)).toMatchObject({
      ok: false,
      reason: 'line_too_long',
    });
  });
  it('reads an optional quality column: blank or absent is good, good/uncertain/bad, anything else a reject', () => {
    const h = parseCsvHeader('sensor,ts,value,Quality');
    if (!h.ok) throw new Error('header');
    const c = h.columns;
    expect(c.quality).toBe(3);
    const ts = Date.parse('2026-01-01T00:00:00Z');
    expect(parseCsvReading('a,2026-01-01T00:00:00Z,1,good', c)).toEqual({
      ok: true,
      reading: { sensor: 'a', ts, value: 1 },
    });
    expect(parseCsvReading('a,2026-01-01T00:00:00Z,1,', c)).toEqual({
      ok: true,
      reading: { sensor: 'a', ts, value: 1 },
    });
    expect(parseCsvReading('a,2026-01-01T00:00:00Z,1', c)).toEqual({
      ok: true,
      reading: { sensor: 'a', ts, value: 1 },
    });
    expect(parseCsvReading('a,2026-01-01T00:00:00Z,1, bad ', c)).toEqual({
      ok: true,
      reading: { sensor: 'a', ts, value: 1, quality: 'bad' },
    });
    expect(parseCsvReading('a,2026-01-01T00:00:00Z,1,uncertain', c)).toEqual({
      ok: true,
      reading: { sensor: 'a', ts, value: 1, quality: 'uncertain' },
    });
    expect(parseCsvReading('a,2026-01-01T00:00:00Z,1,BAD', c)).toMatchObject({
      ok: false,
      reason: 'quality_invalid',
    });
    expect(parseCsvReading('a,2026-01-01T00:00:00Z,1,192', c)).toMatchObject({
      ok: false,
      reason: 'quality_invalid',
    });
  });

  it('NDJSON quality: absent or "good" is good, "uncertain"/"bad" kept, anything else a reject', () => {
    const ts = Date.parse('2026-01-01T00:00:00Z');
    const line = (q: string) => `{"sensor":"a","ts":"2026-01-01T00:00:00Z","value":1${q}}`;
    expect(parseJsonReading(line(''))).toEqual({ ok: true, reading: { sensor: 'a', ts, value: 1 } });
    expect(parseJsonReading(line(',"quality":"good"'))).toEqual({
      ok: true,
      reading: { sensor: 'a', ts, value: 1 },
    });
    expect(parseJsonReading(line(',"quality":"bad"'))).toEqual({
      ok: true,
      reading: { sensor: 'a', ts, value: 1, quality: 'bad' },
    });
    // The JSON.parse path (an escape defeats the fast scan) gives the same.
    expect(parseJsonReading(line(',"quality":"\u0062ad"'))).toEqual({
      ok: true,
      reading: { sensor: 'a', ts, value: 1, quality: 'bad' },
    });
    for (const q of [',"quality":"Good"', ',"quality":null', ',"quality":0', ',"quality":" bad"']) {
      const r = parseJsonReading(line(q));
      expect(r).toMatchObject({ ok: false, reason: 'quality_invalid' });
      if (!r.ok) expect(r.detail).toContain('"good", "uncertain" or "bad"');
    }
  });
});
