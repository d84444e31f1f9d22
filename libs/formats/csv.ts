/**
 * CSV rows of readings: a header naming `sensor`, `ts` and `value` and optionally `quality` (any
 * order, other columns ignored, names matched case-insensitively after trimming), then one reading per physical line.
 * Fields follow RFC 4180 quoting (commas and doubled quotes inside double quotes). A quoted field
 * cannot span lines here: one line is one record, so line numbers stay exact and a bad line never
 * swallows the ones after it. Parsing is lenient (an unterminated quote runs to the end of the
 * line); the field validation then decides whether the row is a usable reading.
 */
import { LIMITS, validateFields, type ParseResult } from '../engine/reading.js';

/** Where the three reading fields are in a CSV row (0-based), from the header. */
export interface CsvColumns {
  sensor: number;
  ts: number;
  value: number;
  /** The optional quality column, or -1 when the header has none (every row is then good). */
  quality: number;
  /** Fields needed to reach the right-most of the columns read. */
  needed: number;
}

/** The columns a readings CSV header must name. */
export const REQUIRED_COLUMNS = ['sensor', 'ts', 'value'] as const;

/** Split a CSV line into at most `limit` fields (the rest of the line is not scanned). */
export function splitCsvLine(line: string, limit = Number.MAX_SAFE_INTEGER): string[] {
  const out: string[] = [];
  if (line.indexOf('"') < 0) {
    // Fast path for the common unquoted row.
    let start = 0;
    while (out.length < limit) {
      const comma = line.indexOf(',', start);
      if (comma < 0) {
        out.push(line.slice(start));
        break;
      }
      out.push(line.slice(start, comma));
      start = comma + 1;
    }
    return out;
  }
  let cursor = 0;
  const length = line.length;
  while (out.length < limit) {
    if (cursor < length && line.charCodeAt(cursor) === 34) {
      // Quoted field: doubled quotes are one quote; text after the closing quote up to the comma is kept.
      let field = '';
      let scan = cursor + 1;
      for (;;) {
        const quote = line.indexOf('"', scan);
        if (quote < 0) {
          field += line.slice(scan);
          scan = length;
          break;
        }
        field += line.slice(scan, quote);
        if (line.charCodeAt(quote + 1) === 34) {
          field += '"';
          scan = quote + 2;
        } else {
          scan = quote + 1;
          break;
        }
      }
      const comma = line.indexOf(',', scan);
      if (comma < 0) {
        out.push(field + line.slice(scan));
        break;
      }
      out.push(field + line.slice(scan, comma));
      cursor = comma + 1;
    } else {
      const comma = line.indexOf(',', cursor);
      if (comma < 0) {
        out.push(line.slice(cursor));
        break;
      }
      out.push(line.slice(cursor, comma));
      cursor = comma + 1;
    }
  }
  return out;
}

/** Locate the three required columns in a header line; an error message when one is missing. */
export function parseCsvHeader(
  line: string,
): { ok: true; columns: CsvColumns } | { ok: false; message: string } {
  const names = splitCsvLine(line).map((f) => f.trim().toLowerCase());
  const idx = (name: string) => names.indexOf(name);
  const missing = REQUIRED_COLUMNS.filter((c) => idx(c) < 0);
  if (missing.length > 0) {
    const found = names.slice(0, 10).join(', ') + (names.length > 10 ? ', ...' : '');
    return {
      ok: false,
      message: `the CSV header must name the columns sensor, ts and value (missing: ${missing.join(', ')}; found: ${found.slice(0, 200)})`,
    };
  }
  const sensor = idx('sensor');
  const ts = idx('ts');
  const value = idx('value');
  const quality = idx('quality');
  return {
    ok: true,
    columns: { sensor, ts, value, quality, needed: Math.max(sensor, ts, value, quality) + 1 },
  };
}

/**
 * One CSV row to a reading. A field absent from a short row counts as missing, and so does an
 * empty `ts` cell; the sensor id is taken as written (not trimmed), like the NDJSON form. An
 * empty, blank or absent `quality` cell is a good reading (as a left-out NDJSON field is); the cell is
 * otherwise matched after trimming, so `bad ` is `bad`.
 */
export function parseCsvReading(line: string, cols: CsvColumns): ParseResult {
  if (line.length > LIMITS.maxLineLength) {
    return {
      ok: false,
      reason: 'line_too_long',
      detail: `line has ${line.length} characters; the limit is ${LIMITS.maxLineLength}`,
    };
  }
  const fields = splitCsvLine(line, cols.needed);
  const ts = fields[cols.ts];
  let quality: string | undefined;
  if (cols.quality >= 0) {
    const cell = fields[cols.quality]?.trim();
    quality = cell === undefined || cell === '' ? undefined : cell;
  }
  return validateFields(fields[cols.sensor], ts === '' ? undefined : ts, fields[cols.value], true, quality);
}
