/**
 * Replay: push parsed records through a fresh Engine in order and write the results to a
 * directory: alerts.ndjson (every alert event), rejected.ndjson (every line that did not become an
 * accepted reading, engine `late` included) and summary.json (counts, effective config, input).
 * Output is deterministic: the same records and config give byte-identical files (no clock values
 * inside them, fixed key order). Other features plug in through `source` (any record batches,
 * e.g. a Kafka time range) and `observers` (e.g. a report builder).
 */
import { mkdir, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { configToJson, type EngineConfig } from '../../libs/config/config.js';
import { Engine, ENGINE_VERSION } from '../../libs/engine/engine.js';
import { LIMITS } from '../../libs/engine/reading.js';
import { DEFAULT_MAX_SENSORS, SensorBudget } from '../../libs/engine/sensor-budget.js';
import { StreamfenceError } from '../../libs/errors/index.js';
import type { InputRecord, ReplayObserver, ReplaySummary } from '../../libs/schema/replay.js';
import type { AlertEvent } from '../../libs/schema/alert-event.js';
import { keyPartitioner } from './partitioner.js';
import { alertKpis, kpiEventOf, type KpiEvent } from '../../libs/kpi/alert-kpis.js';
import { LineWriter } from './writer.js';
import { fileProblem } from '../fs-errors.js';

export type { ReplayObserver, ReplaySummary } from '../../libs/schema/replay.js';

export const REPLAY_FILES = {
  alerts: 'alerts.ndjson',
  rejected: 'rejected.ndjson',
  summary: 'summary.json',
} as const;

export interface ReplayOptions {
  /** Batches of records in input order (e.g. readInput(...)). */
  source: AsyncIterable<InputRecord[]>;
  config: EngineConfig;
  outDir: string;
  /** Describes the input in summary.json; a function is called at the end, when line counts are known. */
  inputInfo: Record<string, unknown> | (() => Record<string, unknown>);
  observers?: ReplayObserver[];
  /** Called after each batch with the records handled so far (drives a progress line). */
  progress?: (records: number) => void;
  /** Most sensors with state at once; readings of new sensors beyond it are rejected (sensor_limit). */
  maxSensors?: number;
  /**
   * Input partitions to judge a file's readings in, as a live monitor of a topic with this many
   * partitions would: each sensor id goes to the partition the default Kafka partitioner gives
   * its key, and the silent-sensor rule keeps event time per partition. A record that carries
   * its own partition (a kafka:// replay) keeps it. Default 1: one event time for the whole file.
   */
  partitions?: number;
}

function sortedCounts(counts: Map<string, number>): Record<string, number> {
  const sorted: Record<string, number> = {};
  for (const key of [...counts.keys()].sort()) sorted[key] = counts.get(key)!;
  return sorted;
}

/**
 * Create the output folder and remove a summary left by an earlier run; exported so a command can
 * find an unusable --out before it starts reading.
 */
export async function prepareDir(outDir: string): Promise<void> {
  try {
    await mkdir(outDir, { recursive: true });
    // A summary.json left by an earlier run would look like a finished run if this one fails.
    await rm(join(outDir, REPLAY_FILES.summary), { force: true });
  } catch (err) {
    throw new StreamfenceError(
      'OUTPUT_UNWRITABLE',
      `cannot use output folder "${outDir}": ${fileProblem(err)}; choose another with --out`,
      { cause: err },
    );
  }
}

/** What one replay writes while it runs: the alert and reject lines, and the counts behind them. */
class ReplayOutput {
  readonly alerts: LineWriter;
  readonly rejected: LineWriter;
  readonly rejectsByReason = new Map<string, number>();
  // Raises and clears only (a small share of the readings), for the alert-system health figures.
  readonly kpiEvents: KpiEvent[] = [];
  /** Event-time span of the accepted readings. */
  readonly span = { start: Infinity, end: -Infinity };

  constructor(
    outDir: string,
    private readonly rejectObservers: ReplayObserver[],
  ) {
    this.alerts = new LineWriter(join(outDir, REPLAY_FILES.alerts));
    this.rejected = new LineWriter(join(outDir, REPLAY_FILES.rejected));
  }

  /** Keeps a line that did not become an accepted reading, with its reason. */
  reject(record: InputRecord, reason: string, detail: string): void {
    this.rejectsByReason.set(reason, (this.rejectsByReason.get(reason) ?? 0) + 1);
    const raw =
      record.raw.length > LIMITS.maxLineLength ? record.raw.slice(0, LIMITS.maxLineLength) : record.raw;
    this.rejected.push(JSON.stringify({ line: record.line, raw, reason, detail }));
    for (const observer of this.rejectObservers) observer.onReject!(record, reason, detail);
  }

  /** Writes an accepted reading's alert events and widens the span. */
  accepted(ts: number, events: readonly AlertEvent[]): void {
    if (ts < this.span.start) this.span.start = ts;
    if (ts > this.span.end) this.span.end = ts;
    for (let j = 0; j < events.length; j++) {
      this.alerts.push(JSON.stringify(events[j]));
      if (events[j].state !== 'updated') this.kpiEvents.push(kpiEventOf(events[j]));
    }
  }

  async flushSome(): Promise<void> {
    await this.alerts.maybeFlush();
    await this.rejected.maybeFlush();
  }

  async close(): Promise<void> {
    await this.alerts.close();
    await this.rejected.close();
  }

  destroy(): void {
    this.alerts.destroy();
    this.rejected.destroy();
  }
}

/**
 * Replays the records through a fresh Engine, writes alerts.ndjson, rejected.ndjson and
 * summary.json into `outDir`, and returns the summary.
 */
export async function runReplay(opts: ReplayOptions): Promise<ReplaySummary> {
  const { source, config, outDir } = opts;
  const observers = opts.observers ?? [];
  const readingObservers = observers.filter((observer) => observer.onReading !== undefined);
  await prepareDir(outDir);
  const maxSensors = opts.maxSensors ?? DEFAULT_MAX_SENSORS;
  const partitionOf = keyPartitioner(opts.partitions ?? 1);
  const engine = new Engine(config, new SensorBudget(maxSensors));
  const output = new ReplayOutput(
    outDir,
    observers.filter((observer) => observer.onReject !== undefined),
  );
  let records = 0;
  try {
    for await (const batch of source) {
      for (let i = 0; i < batch.length; i++) {
        const record = batch[i];
        const parsed = record.result;
        if (!parsed.ok) {
          output.reject(record, parsed.reason, parsed.detail);
          continue;
        }
        const outcome = engine.process(
          parsed.reading,
          record.partition ?? partitionOf(parsed.reading.sensor),
        );
        for (const observer of readingObservers) observer.onReading!(parsed.reading, outcome, engine);
        if (outcome.accepted) output.accepted(parsed.reading.ts, outcome.events);
        else output.reject(record, outcome.reason, outcome.detail);
      }
      records += batch.length;
      // Evicted ids matter to the monitor (it deletes them from Redis); a replay only counts them.
      engine.takeEvicted();
      await output.flushSome();
      opts.progress?.(records);
    }
    await output.close();
  } catch (err) {
    output.destroy();
    throw err;
  }
  for (const observer of observers) await observer.onEnd?.(engine);
  const summary = buildSummary(engine, output, opts, maxSensors);
  addObserverFields(summary, observers);
  await writeSummary(outDir, summary);
  return summary;
}

function buildSummary(
  engine: Engine,
  output: ReplayOutput,
  opts: ReplayOptions,
  maxSensors: number,
): ReplaySummary {
  const counters = engine.counters;
  let rejectedTotal = 0;
  for (const lines of output.rejectsByReason.values()) rejectedTotal += lines;
  const span = output.span;
  return {
    engineVersion: ENGINE_VERSION,
    input: typeof opts.inputInfo === 'function' ? opts.inputInfo() : opts.inputInfo,
    readings: counters.readings,
    quality: {
      good: counters.quality.good,
      uncertain: counters.quality.uncertain,
      bad: counters.quality.bad,
    },
    rejected: { total: rejectedTotal, byReason: sortedCounts(output.rejectsByReason) },
    sensors: engine.sensorCount,
    evaluated: counters.evaluated,
    flagged: {
      fence: counters.flagged.fence,
      outerFence: counters.flagged.outerFence,
      z: counters.flagged.z,
      any: counters.flagged.any,
    },
    alerts: {
      raised: counters.alerts.raised,
      updated: counters.alerts.updated,
      cleared: counters.alerts.cleared,
    },
    activeAtEnd: engine.activeAlertCount(),
    sensorLimit: { max: maxSensors, evicted: engine.evictedTotal },
    config: configToJson(opts.config),
    kpis: alertKpis(output.kpiEvents, span.start <= span.end ? span : { start: 0, end: 0 }),
  };
}

/** Observers' extra summary.json fields; a name that is already taken is a programming error. */
function addObserverFields(summary: ReplaySummary, observers: readonly ReplayObserver[]): void {
  for (const observer of observers) {
    const extra = observer.summaryFields?.() ?? {};
    for (const key of Object.keys(extra)) {
      if (key in summary)
        throw new Error(`replay observer summary field "${key}" clashes with an existing summary field`);
      summary[key] = extra[key];
    }
  }
}

async function writeSummary(outDir: string, summary: ReplaySummary): Promise<void> {
  try {
    await writeFile(join(outDir, REPLAY_FILES.summary), `${JSON.stringify(summary, null, 2)}\n`);
  } catch (err) {
    throw new StreamfenceError(
      'OUTPUT_UNWRITABLE',
      `cannot write the summary in "${outDir}": ${fileProblem(err)}; choose another folder with --out`,
      { cause: err },
    );
  }
}
