/** The alert event: one JSON object per lifecycle transition, published to the alert topic. */
import type { AlertState, Reason, Severity } from './vocabulary.js';

/** The sensor's baseline at the time of the event, for the operator to see how far off it is. */
export interface AlertBaseline {
  q1: number | null;
  median: number | null;
  q3: number | null;
  iqr: number | null;
  lowerFence: number | null;
  upperFence: number | null;
  lowerOuterFence: number | null;
  upperOuterFence: number | null;
  mean: number | null;
  stdDev: number | null;
  count: number;
  /** ISO-8601 time of the oldest and newest reading in the baseline (null before warm-up). */
  from: string | null;
  to: string | null;
}

/** One alert lifecycle transition, as published on the alert topic and shown on the board. */
export interface AlertEvent {
  id: string;
  sensor: string;
  state: AlertState;
  severity: Severity;
  reasons: Reason[];
  value: number;
  /** The reading's timestamp (ISO-8601). */
  ts: string;
  /** When the alert was raised (ISO-8601): the "since when" of the alert. */
  since: string;
  /** Readings flagged since the alert was raised. */
  flaggedReadings: number;
  baseline: AlertBaseline;
  z: number | null;
  robustZ: number | null;
  /** Percent (0-100) of the baseline below the value; null before warm-up. */
  percentileRank: number | null;
  message: string;
  notice: string;
}
