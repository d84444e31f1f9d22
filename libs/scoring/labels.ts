/**
 * Fault labels (ground truth) as CSV: a header naming `sensor,start,end` and optionally `kind`
 * (any order), then one incident per line. Times are ISO-8601 with a zone (or epoch ms); an
 * incident covers start <= ts <= end. Errors give the line number and say what to fix.
 */
import { StreamfenceError } from '../errors/index.js';
import { parseTimestamp } from '../engine/reading.js';

/** One labelled incident: a sensor, a time span (epoch ms) and a kind. */
export interface Incident {
  sensor: string;
  start: number;
  end: number;
  /** Fault kind (e.g. spike, drift); "" when the file has no kind column or leaves it blank. */
  kind: string;
}

const REQUIRED = ['sensor', 'start', 'end'] as const;

/** Split one CSV line; double-quoted fields may hold commas and "" for a quote. Null when quotes are unbalanced. */
export function splitCsvLine(line: string): string[] | null {
  const out: string[] = [];
  let cursor = 0;
  for (;;) {
    if (line[cursor] === '"') {
      let field = '';
      cursor++;
      for (;;) {
        if (cursor >= line.length) return null;
        if (line[cursor] === '"') {
          if (line[cursor + 1] === '"') {
            field += '"';
            cursor += 2;
            continue;
          }
          cursor++;
          break;
        }
        field += line[cursor++];
      }
      out.push(field);
      if (cursor < line.length && line[cursor] !== ',') return null;
    } else {
      const comma = line.indexOf(',', cursor);
      const stop = comma < 0 ? line.length : comma;
      out.push(line.slice(cursor, stop).trim());
      cursor = stop;
    }
    if (cursor >= line.length) return out;
    cursor++; // past the comma
  }
}

function csvField(text: string): string {
  return /[",\n\r]/.test(text) || text !== text.trim() ? `"${text.replace(/"/g, '""')}"` : text;
}

/**
 * Parse a labels CSV (header `sensor,start,end[,kind]` in any order; times ISO-8601 with a zone, or
 * epoch ms). A bad line is an INPUT_UNREADABLE error naming the line and what to fix.
 */
export function parseLabelsCsv(text: string, source = 'labels'): Incident[] {
  const fail = (line: number, msg: string): never => {
    throw new StreamfenceError('INPUT_UNREADABLE', `${source} line ${line}: ${msg}`);
  };
  const lines = text.split(/\r?\n/);
  let col: Record<string, number> | null = null;
  const out: Incident[] = [];
  lines.forEach((raw, index) => {
    const lineNo = index + 1;
    const line = index === 0 ? raw.replace(/^\uFEFF/, '') : raw;
    if (line.trim() === '') return;
    const fields = splitCsvLine(line);
    if (fields === null) fail(lineNo, 'unbalanced double quotes');
    if (col === null) {
      const names = fields!.map((f) => f.trim().toLowerCase());
      const columnIndex: Record<string, number> = {};
      for (const name of [...REQUIRED, 'kind']) {
        const at = names.indexOf(name);
        if (at >= 0) columnIndex[name] = at;
      }
      const missing = REQUIRED.filter((n) => columnIndex[n] === undefined);
      if (missing.length > 0) {
        fail(
          lineNo,
          `the header must name the columns sensor, start, end (and optionally kind); missing ${missing.join(', ')}`,
        );
      }
      col = columnIndex;
      return;
    }
    const get = (n: string): string => (col![n] === undefined ? '' : (fields![col![n]] ?? ''));
    const sensor = get('sensor');
    if (sensor === '') fail(lineNo, 'the sensor is empty');
    const times: number[] = [];
    for (const name of ['start', 'end']) {
      const parsed = parseTimestamp(get(name));
      if (!parsed.ok) fail(lineNo, `${name}: ${parsed.detail}`);
      else times.push(parsed.ts);
    }
    if (times[1] < times[0]) fail(lineNo, `end (${get('end')}) is before start (${get('start')})`);
    out.push({ sensor, start: times[0], end: times[1], kind: get('kind') });
  });
  if (col === null) {
    throw new StreamfenceError(
      'INPUT_UNREADABLE',
      `${source}: empty; expected a header "sensor,start,end,kind" and one line per incident`,
    );
  }
  return out;
}

/** Labels as CSV text (header sensor,start,end,kind; ISO-8601 UTC times), the format parseLabelsCsv reads. */
export function formatLabelsCsv(
  labels: readonly { sensor: string; start: number; end: number; kind?: string }[],
): string {
  const rows = ['sensor,start,end,kind'];
  for (const label of labels) {
    rows.push(
      [
        csvField(label.sensor),
        new Date(label.start).toISOString(),
        new Date(label.end).toISOString(),
        csvField(label.kind ?? ''),
      ].join(','),
    );
  }
  return `${rows.join('\n')}\n`;
}

/**
 * Warnings about labels that cannot be scored as the user probably meant: labels naming a sensor
 * that never appears in the data (always missed, so recall reads 0 % for them) and labels wholly
 * outside the data's time span. One line per cause, naming up to three examples.
 */
export function labelWarnings(
  incidents: readonly Incident[],
  sensors: ReadonlySet<string>,
  dataStart: number,
  dataEnd: number,
): string[] {
  const absent = new Set<string>();
  let absentCount = 0;
  const outside: Incident[] = [];
  for (const incident of incidents) {
    if (!sensors.has(incident.sensor)) {
      absentCount++;
      absent.add(incident.sensor);
    } else if (incident.end < dataStart || incident.start > dataEnd) outside.push(incident);
  }
  const examples = (names: string[]): string =>
    names.slice(0, 3).join(', ') + (names.length > 3 ? `, and ${names.length - 3} more` : '');
  const out: string[] = [];
  if (absentCount > 0)
    out.push(
      `${absentCount === 1 ? '1 label names a sensor that never appears' : `${absentCount} labels name sensors that never appear`} in the data (${examples([...absent])}); they count as missed: check the sensor names in the labels file`,
    );
  if (outside.length > 0)
    out.push(
      `${outside.length === 1 ? '1 label lies' : `${outside.length} labels lie`} outside the data's time span ${new Date(dataStart).toISOString()} to ${new Date(dataEnd).toISOString()} (${examples(outside.map((i) => `${i.sensor} ${new Date(i.start).toISOString()}`))}); they count as missed: check the labels' times and zone`,
    );
  return out;
}
