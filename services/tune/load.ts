/**
 * Read the tuning input once into shared columns, using the replay reader (NDJSON or CSV,
 * optionally gzip). Rejected lines are counted by reason, never silently dropped.
 */
import {
  detectFormat,
  newInputStats,
  readInput,
  type InputFormat,
  type InputStats,
} from '../replay/input.js';
import { ColumnBuilder, type ReadingColumns } from '../../libs/tuning/columns.js';

export interface LoadedInput {
  columns: ReadingColumns;
  format: InputFormat;
  rejected: Record<string, number>;
  /** First rejected line, to show the user what went wrong. */
  firstReject: { line: number; reason: string; detail: string } | null;
  stats: InputStats;
}

export async function loadColumns(
  path: string,
  format?: string,
  onBatch?: (readings: number, stats: InputStats) => void,
): Promise<LoadedInput> {
  const fmt = detectFormat(path, format);
  const stats = newInputStats();
  const b = new ColumnBuilder();
  const rejected: Record<string, number> = {};
  let firstReject: LoadedInput['firstReject'] = null;
  for await (const batch of readInput(path, fmt, stats)) {
    for (const rec of batch) {
      const r = rec.result;
      if (r.ok) b.add(r.reading.sensor, r.reading.ts, r.reading.value, r.reading.quality);
      else {
        rejected[r.reason] = (rejected[r.reason] ?? 0) + 1;
        firstReject ??= { line: rec.line, reason: r.reason, detail: r.detail };
      }
    }
    onBatch?.(b.count, stats);
  }
  return { columns: b.finish(), format: fmt, rejected, firstReject, stats };
}
