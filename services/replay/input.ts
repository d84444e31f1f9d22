/**
 * Reading files of readings: NDJSON (one {"sensor","ts","value"} per line) or CSV with a header,
 * optionally gzip-compressed (told by content, not by name). The file is streamed in chunks and split into lines incrementally,
 * so memory does not grow with the file, and records come out in file order in batches.
 */
import { closeSync, createReadStream, openSync, readSync, statSync } from 'node:fs';
import { StringDecoder } from 'node:string_decoder';
import { createGunzip } from 'node:zlib';
import { StreamfenceError } from '../../libs/errors/index.js';
import { LIMITS, parseJsonReading } from '../../libs/engine/reading.js';
import type { InputRecord } from '../../libs/schema/replay.js';
import { LineSplitter, isBlank } from '../../libs/formats/lines.js';
import { parseCsvHeader, parseCsvReading, type CsvColumns } from '../../libs/formats/csv.js';
import { fileProblem } from '../fs-errors.js';

export type InputFormat = 'ndjson' | 'csv';

export const INPUT_FORMATS: readonly InputFormat[] = ['ndjson', 'csv'];

/** One non-blank input line: its 1-based physical line number, its text (clipped) and the parse result. */
export type { InputRecord } from '../../libs/schema/replay.js';

/** Counters the reader keeps up to date while it runs (for progress and the summary). */
export interface InputStats {
  /** Physical lines read (including blank lines and a CSV header). */
  lines: number;
  /** Blank (empty or whitespace-only) lines, skipped without a reject. */
  blank: number;
  /** Bytes read from the file (compressed bytes for .gz). */
  bytes: number;
}

export function newInputStats(): InputStats {
  return { lines: 0, blank: 0, bytes: 0 };
}

/** Records per yielded batch: large enough to amortise async overhead, small enough to stay cache-friendly. */
export const BATCH_SIZE = 4096;

const EXTENSIONS: Record<string, InputFormat> = {
  ndjson: 'ndjson',
  jsonl: 'ndjson',
  json: 'ndjson',
  csv: 'csv',
};

/** The input format: `explicit` (from --format) when given, otherwise from the extension (a trailing .gz is looked through). */
export function detectFormat(path: string, explicit?: string): InputFormat {
  if (explicit !== undefined) {
    const f = explicit.trim().toLowerCase();
    if (f === 'ndjson' || f === 'csv') return f;
    throw new StreamfenceError(
      'ARGS_INVALID',
      `unknown input format "${explicit}"; use --format ndjson or --format csv`,
    );
  }
  const name = path.toLowerCase().replace(/\.gz$/, '');
  const dot = name.lastIndexOf('.');
  const ext = dot >= 0 ? name.slice(dot + 1) : '';
  const f = EXTENSIONS[ext];
  if (f === undefined) {
    throw new StreamfenceError(
      'ARGS_INVALID',
      `cannot tell the format of "${path}" from its extension; name it .ndjson, .jsonl, .json or .csv (optionally .gz), or pass --format ndjson|csv`,
    );
  }
  return f;
}

export function isGzipPath(path: string): boolean {
  return path.toLowerCase().endsWith('.gz');
}

/** The two bytes every gzip stream starts with (RFC 1952, ID1 ID2). */
const GZIP_MAGIC = [0x1f, 0x8b];

/**
 * Whether the file's content is gzip, by its first bytes rather than its name: a compressed file
 * named .ndjson is read decompressed, and a plain file named .gz is read as it is.
 */
export function isGzipContent(path: string): boolean {
  const head = Buffer.alloc(2);
  let fd: number | undefined;
  try {
    fd = openSync(path, 'r');
    const n = readSync(fd, head, 0, 2, 0);
    return n === 2 && head[0] === GZIP_MAGIC[0] && head[1] === GZIP_MAGIC[1];
  } catch (err) {
    throw unreadable(path, err);
  } finally {
    if (fd !== undefined) closeSync(fd);
  }
}

/** What a command needs to know about an input file before reading it. */
export interface InputFileInfo {
  size: number;
  gzip: boolean;
}

/**
 * Check an input file before any output is written: it exists, is a readable file and is not
 * empty; and whether it is gzip-compressed (by content). Failures are one-line typed errors.
 */
export function checkInputFile(path: string): InputFileInfo {
  let size: number;
  try {
    const st = statSync(path);
    if (st.isDirectory()) throw Object.assign(new Error('is a directory'), { code: 'EISDIR' });
    size = st.size;
  } catch (err) {
    throw unreadable(path, err);
  }
  if (size === 0)
    throw new StreamfenceError(
      'INPUT_EMPTY',
      `input "${path}" is empty (0 bytes): check the path, or that the file was written completely`,
    );
  return { size, gzip: isGzipContent(path) };
}

/** Turn a file-system or decompression error into a message that says what to change. */
export function unreadable(path: string, err: unknown): StreamfenceError {
  const code = (err as NodeJS.ErrnoException | undefined)?.code;
  const why =
    code === 'Z_DATA_ERROR' || code === 'Z_BUF_ERROR'
      ? 'it starts like gzip but does not decompress (corrupt or cut short)'
      : fileProblem(err);
  return new StreamfenceError('INPUT_UNREADABLE', `cannot read input "${path}": ${why}`, { cause: err });
}

/**
 * Stream the file and yield its non-blank lines as parsed records, in file order, in batches of
 * about BATCH_SIZE. The CSV header is consumed, not yielded; a CSV without the required columns
 * fails with INPUT_UNREADABLE. `stats` (optional) is updated as the file is read.
 */
export async function* readInput(
  path: string,
  format: InputFormat,
  stats: InputStats = newInputStats(),
): AsyncGenerator<InputRecord[]> {
  const { file, source, gzip } = openInput(path, stats);
  const decoder = new StringDecoder('utf8');
  const splitter = new LineSplitter(LIMITS.maxLineLength);
  let batch: InputRecord[] = [];
  let columns: CsvColumns | null = null;
  let headerError: string | null = null;
  const maxLen = LIMITS.maxLineLength;
  let anyRecord = false;

  const onLine = (line: string, lineNo: number, fullLength: number): void => {
    if (isBlank(line)) {
      stats.blank++;
      return;
    }
    if (fullLength > maxLen) {
      batch.push({
        line: lineNo,
        raw: line.length > maxLen ? line.slice(0, maxLen) : line,
        result: {
          ok: false,
          reason: 'line_too_long',
          detail: `line has ${fullLength} characters; the limit is ${maxLen}`,
        },
      });
      return;
    }
    if (format === 'ndjson') {
      batch.push({ line: lineNo, raw: line, result: parseJsonReading(line) });
    } else if (columns !== null) {
      batch.push({ line: lineNo, raw: line, result: parseCsvReading(line, columns) });
    } else if (headerError === null) {
      const h = parseCsvHeader(line);
      if (h.ok) columns = h.columns;
      else headerError = `line ${lineNo}: ${h.message}`;
    }
  };

  try {
    for await (const chunk of source) {
      if (!gzip) stats.bytes += chunk.length;
      splitter.feed(decoder.write(chunk), onLine);
      stats.lines = splitter.lines;
      if (headerError !== null) break;
      if (batch.length >= BATCH_SIZE) {
        anyRecord = true;
        const out = batch;
        batch = [];
        yield out;
      }
    }
    if (headerError === null) {
      splitter.feed(decoder.end(), onLine);
      splitter.end(onLine);
      stats.lines = splitter.lines;
    }
  } catch (err) {
    throw unreadable(path, err);
  } finally {
    file.destroy();
  }
  if (headerError !== null) {
    throw new StreamfenceError('INPUT_UNREADABLE', `cannot read input "${path}": ${headerError}`);
  }
  if (format === 'csv' && columns === null) throw noCsvHeader(path);
  if (batch.length > 0) yield batch;
  if (!anyRecord && batch.length === 0) throw nothingToRead(path, format, stats);
}

/**
 * The file as a stream of bytes to split into lines, decompressed when its content is gzip.
 * `stats.bytes` counts the compressed bytes here for gzip; the caller counts a plain file's.
 */
function openInput(
  path: string,
  stats: InputStats,
): { file: ReturnType<typeof createReadStream>; source: AsyncIterable<Buffer>; gzip: boolean } {
  const gzip = isGzipContent(path);
  // 64 KiB chunks (Node's default), not more: decoded, a 256 KiB chunk is a string too big for V8's
  // ordinary heap pages, and reading the bench's 88 MB file that way took twice the CPU time
  // (Node 20; `npm run bench -- replay` keeps the comparison as readline256kParseRowsPerSec).
  const file = createReadStream(path, { highWaterMark: 64 * 1024 });
  if (!gzip) return { file, source: file, gzip };
  file.on('data', (b: Buffer | string) => {
    stats.bytes += b.length;
  });
  const gunzip = createGunzip();
  file.on('error', (e) => gunzip.destroy(e));
  return { file, source: file.pipe(gunzip), gzip };
}

function noCsvHeader(path: string): StreamfenceError {
  return new StreamfenceError(
    'INPUT_UNREADABLE',
    `cannot read input "${path}": the file has no CSV header; the first non-blank line must name the columns sensor, ts and value`,
  );
}

function nothingToRead(path: string, format: InputFormat, stats: InputStats): StreamfenceError {
  return new StreamfenceError(
    'INPUT_EMPTY',
    `input "${path}" holds nothing to read (${format === 'csv' ? 'only a header and ' : ''}${stats.blank} blank line${stats.blank === 1 ? '' : 's'}): check the path, or that the file was written completely`,
  );
}
