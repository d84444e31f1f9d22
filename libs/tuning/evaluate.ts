/**
 * One grid point, end to end: replay the columns through a fresh Engine with the point's config
 * and score the raised alerts. The same function runs in tuning workers and in tests, so what
 * tune reports is exactly what a replay with that config gives.
 */
import type { EngineConfig } from '../config/config.js';
import { Engine } from '../engine/engine.js';
import { score, type RaisedAlert, type Score, type ScoreOptions } from '../scoring/score.js';
import type { Incident } from '../scoring/labels.js';
import { readingAt, type ReadingColumns } from './columns.js';

/**
 * Raised alerts (sensor, event time) of a replay of the columns in their order. The event's own
 * sensor and time count: a reading can raise an alert for another sensor (one gone silent).
 */
export function replayRaised(cfg: EngineConfig, c: ReadingColumns): RaisedAlert[] {
  const engine = new Engine(cfg);
  const out: RaisedAlert[] = [];
  for (let i = 0; i < c.count; i++) {
    const o = engine.process(readingAt(c, i));
    for (const e of o.events) {
      if (e.state !== 'raised') continue;
      out.push({ sensor: e.sensor, ts: Date.parse(e.ts) });
    }
  }
  return out;
}

/** Score one config on the columns against the incidents (what tune reports for a grid point). */
export function evaluateConfig(
  cfg: EngineConfig,
  c: ReadingColumns,
  incidents: readonly Incident[],
  opts: ScoreOptions,
): Score {
  return score(incidents, replayRaised(cfg, c), opts);
}
