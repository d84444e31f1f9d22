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

function sortedCounts(m: Map<string, number>): Record<string, number> {
  const out: Record<string, number> = {};
  for (const k of [...m.keys()].sort()) out[k] = m.get(k)!;
  return out;
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

export async function runReplay(opts: ReplayOptions): Promise<ReplaySummary> {
  const { source, config, outDir } = opts;
  const observers = opts.observers ?? [];
  const readingObs = observers.filter((o) => o.onReading !== undefined);
  const rejectObs = observers.filter((o) => o.onReject !== undefined);
  await prepareDir(outDir);
  const maxSensors = opts.maxSensors ?? DEFAULT_MAX_SENSORS;
  const partitionOf = keyPartitioner(opts.partitions ?? 1);
  const engine = new Engine(config, new SensorBudget(maxSensors));
  const alerts = new LineWriter(join(outDir, REPLAY_FILES.alerts));
  const rejected = new LineWriter(join(outDir, REPLAY_FILES.rejected));
  const byReason = new Map<string, number>();
  let records = 0;
  // Raises and clears only (a small share of the readings), for the alert-system health figures.
  const kpiEvents: KpiEvent[] = [];
  const span = { start: Infinity, end: -Infinity };

  const reject = (rec: InputRecord, reason: string, detail: string): void => {
    byReason.set(reason, (byReason.get(reason) ?? 0) + 1);
    const raw = rec.raw.length > LIMITS.maxLineLength ? rec.raw.slice(0, LIMITS.maxLineLength) : rec.raw;
    rejected.push(JSON.stringify({ line: rec.line, raw, reason, detail }));
    for (const o of rejectObs) o.onReject!(rec, reason, detail);
  };

  try {
    for await (const batch of source) {
      for (let i = 0; i < batch.length; i++) {
        const rec = batch[i];
        const res = rec.result;
        if (!res.ok) {
          reject(rec, res.reason, res.detail);
          continue;
        }
        const out = engine.process(res.reading, rec.partition ?? partitionOf(res.reading.sensor));
        for (const o of readingObs) o.onReading!(res.reading, out, engine);
        if (!out.accepted) {
          reject(rec, out.reason, out.detail);
          continue;
        }
        const ev = out.events;
        const ts = res.reading.ts;
        if (ts < span.start) span.start = ts;
        if (ts > span.end) span.end = ts;
        for (let j = 0; j < ev.length; j++) {
          alerts.push(JSON.stringify(ev[j]));
          if (ev[j].state !== 'updated') kpiEvents.push(kpiEventOf(ev[j]));
        }
      }
      records += batch.length;
      // Evicted ids matter to the monitor (it deletes them from Redis); a replay only counts them.
      engine.takeEvicted();
      await alerts.maybeFlush();
      await rejected.maybeFlush();
      opts.progress?.(records);
    }
    await alerts.close();
    await rejected.close();
  } catch (err) {
    alerts.destroy();
    rejected.destroy();
    throw err;
  }
  for (const o of observers) await o.onEnd?.(engine);

  const c = engine.counters;
  let total = 0;
  for (const n of byReason.values()) total += n;
  const summary: ReplaySummary = {
    engineVersion: ENGINE_VERSION,
    input: typeof opts.inputInfo === 'function' ? opts.inputInfo() : opts.inputInfo,
    readings: c.readings,
    quality: { good: c.quality.good, uncertain: c.quality.uncertain, bad: c.quality.bad },
    rejected: { total, byReason: sortedCounts(byReason) },
    sensors: engine.sensorCount,
    evaluated: c.evaluated,
    flagged: { fence: c.flagged.fence, outerFence: c.flagged.outerFence, z: c.flagged.z, any: c.flagged.any },
    alerts: { raised: c.alerts.raised, updated: c.alerts.updated, cleared: c.alerts.cleared },
    activeAtEnd: engine.activeAlertCount(),
    sensorLimit: { max: maxSensors, evicted: engine.evictedTotal },
    config: configToJson(config),
    kpis: alertKpis(kpiEvents, span.start <= span.end ? span : { start: 0, end: 0 }),
  };
  for (const o of observers) {
    const extra = o.summaryFields?.() ?? {};
    for (const k of Object.keys(extra)) {
      if (k in summary)
        throw new Error(`replay observer summary field "${k}" clashes with an existing summary field`);
      summary[k] = extra[k];
    }
  }
  try {
    await writeFile(join(outDir, REPLAY_FILES.summary), `${JSON.stringify(summary, null, 2)}\n`);
  } catch (err) {
    throw new StreamfenceError(
      'OUTPUT_UNWRITABLE',
      `cannot write the summary in "${outDir}": ${fileProblem(err)}; choose another folder with --out`,
      {
        cause: err,
      },
    );
  }
  return summary;
}
