/** Messages between the tuning pool and its workers. */
import type { ScoreOptions } from '../../libs/scoring/score.js';
import type { PointEvaluation } from '../../libs/tuning/evaluate.js';
import type { Incident } from '../../libs/scoring/labels.js';
import type { GridPoint } from '../../libs/tuning/grid.js';

export interface WorkerInit {
  names: string[];
  sensor: Uint32Array;
  ts: Float64Array;
  value: Float64Array;
  quality: Uint8Array;
  count: number;
  /** Base config as configToJson output (plain JSON crosses the thread boundary cleanly). */
  baseConfig: Record<string, unknown>;
  incidents: Incident[];
  scoreOptions: ScoreOptions;
}

export type ToWorker = { type: 'point'; index: number; point: GridPoint } | { type: 'stop' };

export type FromWorker =
  | { type: 'result'; index: number; evaluation: PointEvaluation }
  | { type: 'error'; index: number; message: string; code?: string };
