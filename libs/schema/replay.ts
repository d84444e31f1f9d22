/**
 * The shapes a replay hands around: one input record (a line and its parse), the observer hooks
 * that features such as the report plug into, and the summary.json document. They live in libs so
 * pure builders (libs/report) can consume a replay without importing the services that run it.
 */
import type { Engine, ProcessOutcome } from '../engine/engine.js';
import type { ParseResult, Reading } from '../engine/reading.js';
import type { AlertKpis } from '../kpi/alert-kpis.js';

/** One input line and what parsing it gave, numbered from 1 in file (or merged topic) order. */
export interface InputRecord {
  line: number;
  raw: string;
  result: ParseResult;
  /** The Kafka partition it was read from (a kafka:// replay); absent for a file. */
  partition?: number;
}

/** Hooks a feature plugs into a replay with (the report, the audit); all optional. */
export interface ReplayObserver {
  /** Every valid reading handed to the engine, with its outcome (a `late` outcome is also reported to onReject). */
  onReading?(reading: Reading, outcome: ProcessOutcome, engine: Engine): void;
  /** Every rejected line: parse rejects and engine `late` rejects, in input order. */
  onReject?(rec: InputRecord | { line: number; raw: string }, reason: string, detail: string): void;
  /** Once, after the last record, before summary.json is written. */
  onEnd?(engine: Engine): void | Promise<void>;
  /**
   * Extra top-level fields for summary.json (e.g. a report's audit), asked after onEnd. They follow
   * the core fields; a name that is already taken is refused, so the core counts stay trustworthy.
   */
  summaryFields?(): Record<string, unknown>;
}

/** summary.json of a replay: counts, the effective config, the input, and observers' fields. */
export interface ReplaySummary {
  engineVersion: string;
  input: Record<string, unknown>;
  /** Readings accepted by the engine, of every quality. */
  readings: number;
  /** Accepted readings by quality; only `good` ones were judged and learned. */
  quality: { good: number; uncertain: number; bad: number };
  rejected: { total: number; byReason: Record<string, number> };
  sensors: number;
  evaluated: number;
  flagged: { fence: number; outerFence: number; z: number; any: number };
  alerts: { raised: number; updated: number; cleared: number };
  /** Alerts still raised when the input ended. */
  activeAtEnd: number;
  /** The sensor limit in force and the idle sensors evicted to stay under it. */
  sensorLimit: { max: number; evicted: number };
  config: Record<string, unknown>;
  /** Alert-system health figures of the raised and cleared events (libs/kpi/alert-kpis.ts). */
  kpis: AlertKpis;
  /** Fields added by observers (summaryFields). */
  [extra: string]: unknown;
}
