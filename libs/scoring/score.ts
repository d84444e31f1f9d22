/**
 * Scoring raised alerts against labelled incidents.
 *
 * - An incident is CAUGHT when an alert is raised for its sensor with start <= ts <= end + grace.
 * - A raised alert is TRUE when it falls in such an interval [start, end + grace] of any incident
 *   of its sensor (of any kind, dropouts included).
 * - recall = caught / incidents, over the kinds counted in the headline (dropouts are left out by
 *   default: only the silent-sensor rule, staleAfter, can catch one, and `tune` counts them when
 *   the config sets it); null when there are no such incidents. Per-kind recall covers every kind.
 * - precision = true raised / raised; null when nothing was raised.
 * - alertsPerHour = raised / hours of data (last reading ts - first reading ts); null for a zero span.
 * - worst10min = the most alerts raised in any 10-minute window [t, t + 10 min); flood = worst10min
 *   > 10 (11 or more; exactly 10 is not a flood).
 */
import { FLOOD_LIMIT, FLOOD_WINDOW_MS } from '../schema/vocabulary.js';
import type { Incident } from './labels.js';

/** A raised alert as scoring sees it: its sensor and the raising reading's time. */
export interface RaisedAlert {
  sensor: string;
  ts: number;
}

/** How alerts are matched to incidents and rates counted. */
export interface ScoreOptions {
  /** Extra time after an incident's end in which an alert still counts (ms, default 120 000). */
  graceMs?: number;
  /** First and last reading times of the data (for the alert rate). */
  dataStart: number;
  dataEnd: number;
  /** Kinds left out of the headline recall (default ["dropout"]). */
  excludeFromRecall?: readonly string[];
}

/** Recall of one fault kind. */
export interface KindScore {
  incidents: number;
  caught: number;
  recall: number | null;
}

/** How well a set of raised alerts catches the labelled incidents, and at what alert rate. */
export interface Score {
  incidents: number;
  caught: number;
  recall: number | null;
  raised: number;
  trueRaised: number;
  precision: number | null;
  hours: number;
  alertsPerHour: number | null;
  worst10min: number;
  flood: boolean;
  recallByKind: Record<string, KindScore>;
}

/** Default grace after an incident's end in which a raise still counts as catching it (2 minutes). */
export const DEFAULT_GRACE_MS = 120_000;
/** The kind name incidents without a kind are reported under. */
export const NO_KIND = '(none)';

interface SensorIntervals {
  starts: number[];
  /** Running maximum of end + grace over intervals sorted by start. */
  reach: number[];
}

function indexIncidents(incidents: readonly Incident[], grace: number): Map<string, SensorIntervals> {
  const bySensor = new Map<string, { start: number; stop: number }[]>();
  for (const incident of incidents) {
    let list = bySensor.get(incident.sensor);
    if (list === undefined) bySensor.set(incident.sensor, (list = []));
    list.push({ start: incident.start, stop: incident.end + grace });
  }
  const out = new Map<string, SensorIntervals>();
  for (const [sensor, list] of bySensor) {
    list.sort((a, b) => a.start - b.start);
    const reach: number[] = [];
    let max = -Infinity;
    for (const interval of list) reach.push((max = Math.max(max, interval.stop)));
    out.set(sensor, { starts: list.map((x) => x.start), reach });
  }
  return out;
}

/** Index of the last element <= bound in a sorted array, or -1. */
function lastAtOrBefore(sorted: readonly number[], bound: number): number {
  let low = 0;
  let high = sorted.length - 1;
  let ans = -1;
  while (low <= high) {
    const mid = (low + high) >> 1;
    if (sorted[mid] <= bound) {
      ans = mid;
      low = mid + 1;
    } else high = mid - 1;
  }
  return ans;
}

/** Index of the last element < bound in a sorted array, or -1. */
function lastBefore(sorted: readonly number[], bound: number): number {
  let low = 0;
  let high = sorted.length - 1;
  let ans = -1;
  while (low <= high) {
    const mid = (low + high) >> 1;
    if (sorted[mid] < bound) {
      ans = mid;
      low = mid + 1;
    } else high = mid - 1;
  }
  return ans;
}

/** The most timestamps in any window [t, t + width). */
export function worstWindow(times: readonly number[], width: number): number {
  const ts = [...times].sort((a, b) => a - b);
  let best = 0;
  let first = 0;
  for (let last = 0; last < ts.length; last++) {
    while (ts[last] - ts[first] >= width) first++;
    best = Math.max(best, last - first + 1);
  }
  return best;
}

/** Raise times per sensor, sorted. */
function raisesBySensor(raised: readonly RaisedAlert[]): Map<string, number[]> {
  const alertsBy = new Map<string, number[]>();
  for (const alert of raised) {
    let list = alertsBy.get(alert.sensor);
    if (list === undefined) alertsBy.set(alert.sensor, (list = []));
    list.push(alert.ts);
  }
  for (const list of alertsBy.values()) list.sort((a, b) => a - b);
  return alertsBy;
}

/** Raises on each incident's sensor within [start, end + grace], per incident (0 = missed). */
export function incidentRaises(
  incidents: readonly Incident[],
  raised: readonly RaisedAlert[],
  graceMs: number,
): number[] {
  const alertsBy = raisesBySensor(raised);
  return incidents.map((inc) => {
    const list = alertsBy.get(inc.sensor);
    if (list === undefined) return 0;
    return Math.max(0, lastAtOrBefore(list, inc.end + graceMs) - lastBefore(list, inc.start));
  });
}

/**
 * Score raised alerts against incidents: recall (overall and per kind), precision, alerts per hour,
 * worst 10 minutes.
 */
export function score(
  incidents: readonly Incident[],
  raised: readonly RaisedAlert[],
  opts: ScoreOptions,
): Score {
  const grace = opts.graceMs ?? DEFAULT_GRACE_MS;
  const exclude = new Set(opts.excludeFromRecall ?? ['dropout']);

  // Alert times per sensor, sorted, for "any alert in [start, end + grace]".
  const alertsBy = new Map<string, number[]>();
  for (const alert of raised) {
    let list = alertsBy.get(alert.sensor);
    if (list === undefined) alertsBy.set(alert.sensor, (list = []));
    list.push(alert.ts);
  }
  for (const list of alertsBy.values()) list.sort((a, b) => a - b);

  const byKind: Record<string, KindScore> = {};
  let counted = 0;
  let caught = 0;
  for (const inc of incidents) {
    const list = alertsBy.get(inc.sensor);
    const at = list === undefined ? -1 : lastAtOrBefore(list, inc.end + grace);
    const hit = at >= 0 && list![at] >= inc.start;
    const kind = inc.kind === '' ? NO_KIND : inc.kind;
    const kindScore = (byKind[kind] ??= { incidents: 0, caught: 0, recall: null });
    kindScore.incidents++;
    if (hit) kindScore.caught++;
    if (!exclude.has(kind)) {
      counted++;
      if (hit) caught++;
    }
  }
  for (const kindScore of Object.values(byKind)) kindScore.recall = kindScore.caught / kindScore.incidents;

  const intervals = indexIncidents(incidents, grace);
  let trueRaised = 0;
  for (const alert of raised) {
    const sensorIntervals = intervals.get(alert.sensor);
    if (sensorIntervals === undefined) continue;
    const at = lastAtOrBefore(sensorIntervals.starts, alert.ts);
    if (at >= 0 && sensorIntervals.reach[at] >= alert.ts) trueRaised++;
  }

  const hours = Math.max(0, opts.dataEnd - opts.dataStart) / 3_600_000;
  const worst = worstWindow(
    raised.map((a) => a.ts),
    FLOOD_WINDOW_MS,
  );
  return {
    incidents: counted,
    caught,
    recall: counted === 0 ? null : caught / counted,
    raised: raised.length,
    trueRaised,
    precision: raised.length === 0 ? null : trueRaised / raised.length,
    hours,
    alertsPerHour: hours > 0 ? raised.length / hours : null,
    worst10min: worst,
    flood: worst > FLOOD_LIMIT,
    recallByKind: byKind,
  };
}
