/**
 * One grid point, end to end: replay the columns through a fresh Engine with the point's config,
 * score the raised alerts and compute the alert-system health figures (libs/kpi) of all its
 * alert events. The same function runs in tuning workers and in tests, so what tune reports is
 * exactly what a replay with that config gives.
 */
import type { EngineConfig } from '../config/config.js';
import { Engine } from '../engine/engine.js';
import { alertKpis, kpiEventOf, type AlertKpis, type KpiEvent } from '../kpi/alert-kpis.js';
import {
  DEFAULT_GRACE_MS,
  score,
  type RaisedAlert,
  type Score,
  type ScoreOptions,
} from '../scoring/score.js';
import type { Incident } from '../scoring/labels.js';
import { readingAt, type ReadingColumns } from './columns.js';

/** What tune learns about one grid point: its score against the labels and its alert-system health. */
export interface PointEvaluation {
  score: Score;
  kpis: AlertKpis;
}

/**
 * The raised and cleared alert events of a replay of the columns in their order (updates left
 * out: no figure uses them). The event's own sensor and time count: a reading can raise an alert
 * for another sensor (one gone silent).
 */
export function replayEvents(cfg: EngineConfig, columns: ReadingColumns): KpiEvent[] {
  const engine = new Engine(cfg);
  const out: KpiEvent[] = [];
  for (let i = 0; i < columns.count; i++) {
    const outcome = engine.process(readingAt(columns, i));
    for (const event of outcome.events) if (event.state !== 'updated') out.push(kpiEventOf(event));
  }
  return out;
}

/** Raised alerts (sensor, event time) of a replay of the columns in their order. */
export function replayRaised(cfg: EngineConfig, columns: ReadingColumns): RaisedAlert[] {
  return raisedOf(replayEvents(cfg, columns));
}

const raisedOf = (events: readonly KpiEvent[]): RaisedAlert[] =>
  events.filter((e) => e.state === 'raised').map((e) => ({ sensor: e.sensor, ts: e.ts }));

/**
 * Score one config on the columns against the incidents, with the health figures over the data's
 * span (raises per caught incident uses the same grace and the same kinds as the recall).
 */
export function evaluateConfig(
  cfg: EngineConfig,
  columns: ReadingColumns,
  incidents: readonly Incident[],
  opts: ScoreOptions,
): PointEvaluation {
  const events = replayEvents(cfg, columns);
  const kpis = alertKpis(
    events,
    { start: opts.dataStart, end: opts.dataEnd },
    {},
    {
      incidents,
      graceMs: opts.graceMs ?? DEFAULT_GRACE_MS,
      excludeKinds: opts.excludeFromRecall ?? ['dropout'],
    },
  );
  return { score: score(incidents, raisedOf(events), opts), kpis };
}
