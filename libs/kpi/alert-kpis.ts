/**
 * Alert-system health figures, computed from alert events alone: the one definition replay,
 * tune, the board and the reports all use. Pure: events and the time span are passed in.
 *
 * Definitions (each a setting in {@link KpiSettings}; defaults are common alarm-management practice):
 * - alerts per hour / per 10 minutes: average = raised / span length; peak = the most raised in one
 *   clock-aligned (UTC, epoch-aligned) hour or 10-minute period that the span touches;
 * - worst 10 minutes: the most raised in any sliding window [t, t + 10 min);
 * - flood periods: aligned 10-minute periods with MORE than `floodLimit` raised (exactly 10 is not
 *   a flood); their share of all periods the span touches;
 * - chattering: a sensor raising `chatterRaises` or more times with the first and the last at most
 *   `chatterWindowMs` apart (3 within 60 s by default); counted as sensors and as raises in such runs;
 * - fleeting: an alert cleared at most `fleetingMs` after it was raised (60 s by default);
 * - stale: an alert active longer than `staleMs` (24 h), cleared late or still active at the span end;
 * - top sensors: the `topN` (10) sensors with the most raises and their share of all raises;
 * - raises per caught incident (labels given): raises falling in caught incidents' intervals per
 *   caught incident (1 is the ideal: one alert per incident).
 */
import { incidentRaises, worstWindow, type RaisedAlert } from '../scoring/score.js';
import type { Incident } from '../scoring/labels.js';
import type { AlertState } from '../schema/vocabulary.js';
import { FLOOD_LIMIT, FLOOD_WINDOW_MS } from '../schema/vocabulary.js';

/** One alert event as the KPIs need it (a lighter form of AlertEvent, times in epoch ms). */
export interface KpiEvent {
  /** The alert's id: a raise and its clear share it. */
  id: string;
  sensor: string;
  state: AlertState;
  /** The event's reading time. */
  ts: number;
  /** When the alert was raised. */
  since: number;
}

/** The numbers that define the KPIs (all settings; the defaults are {@link KPI_DEFAULTS}). */
export interface KpiSettings {
  /** Raises of one sensor that make chattering (default 3). */
  chatterRaises: number;
  /** ...with the first and last at most this far apart (ms, default 60 000). */
  chatterWindowMs: number;
  /** An alert cleared at most this long after its raise is fleeting (ms, default 60 000). */
  fleetingMs: number;
  /** An alert active longer than this is stale (ms, default 24 h). */
  staleMs: number;
  /** More than this many raised in one 10-minute period is a flood (default FLOOD_LIMIT, 10). */
  floodLimit: number;
  /** The flood period (ms, default FLOOD_WINDOW_MS, 10 minutes). */
  floodWindowMs: number;
  /** How many of the most frequent sensors are listed (default 10). */
  topN: number;
}

/** Default KPI settings: common alarm-management practice (see README, *Alert-system health*). */
export const KPI_DEFAULTS: Readonly<KpiSettings> = Object.freeze({
  chatterRaises: 3,
  chatterWindowMs: 60_000,
  fleetingMs: 60_000,
  staleMs: 24 * 3_600_000,
  floodLimit: FLOOD_LIMIT,
  floodWindowMs: FLOOD_WINDOW_MS,
  topN: 10,
});

/** The event-time span the figures are measured over (epoch ms, start <= end). */
export interface KpiSpan {
  start: number;
  end: number;
}

/** Labelled incidents, for raises per caught incident (the same matching as tune's scoring). */
export interface KpiLabels {
  incidents: readonly Incident[];
  /** Time after an incident's end in which a raise still counts (ms). */
  graceMs: number;
  /** Kinds left out (tune leaves out dropouts). */
  excludeKinds?: readonly string[];
}

/** One of the most frequent sensors. */
export interface TopSensor {
  sensor: string;
  raised: number;
  /** raised / all raised. */
  share: number;
}

/** The alert-system health figures (`summary.json` `kpis`, tuning points, the board). */
export interface AlertKpis {
  /** Hours in the span. */
  hours: number;
  raised: number;
  cleared: number;
  perHour: { average: number | null; peak: number };
  per10Min: { average: number | null; peak: number };
  /** Most raised in any sliding 10-minute window. */
  worst10min: number;
  flood: {
    /** Aligned 10-minute periods the span touches. */
    periods: number;
    /** Of those, periods with more than floodLimit raised. */
    floodPeriods: number;
    /** floodPeriods / periods (null for no periods). */
    share: number | null;
    /** worst10min > floodLimit: some 10 minutes (sliding) held a flood. */
    any: boolean;
  };
  chattering: { sensors: number; raises: number };
  fleeting: number;
  stale: { count: number; activeAtEnd: number };
  top: { sensors: TopSensor[]; share: number | null };
  /** Null without labels, or when no incident was caught. */
  raisesPerCaught: number | null;
  settings: KpiSettings;
}

/** An AlertEvent (ISO times) as a KpiEvent. */
export function kpiEventOf(event: {
  id: string;
  sensor: string;
  state: AlertState;
  ts: string;
  since: string;
}): KpiEvent {
  return {
    id: event.id,
    sensor: event.sensor,
    state: event.state,
    ts: Date.parse(event.ts),
    since: Date.parse(event.since),
  };
}

/** Most raises in one aligned period of `width` ms, and how many periods exceed `limit`. */
function alignedCounts(
  times: readonly number[],
  width: number,
  limit: number,
): { peak: number; over: number } {
  const raisesByPeriod = new Map<number, number>();
  for (const time of times) {
    const period = Math.floor(time / width);
    raisesByPeriod.set(period, (raisesByPeriod.get(period) ?? 0) + 1);
  }
  let peak = 0;
  let over = 0;
  for (const count of raisesByPeriod.values()) {
    if (count > peak) peak = count;
    if (count > limit) over++;
  }
  return { peak, over };
}

/** Chattering sensors and the raises that belong to a chattering run. */
function chattering(
  raisesBySensor: Map<string, number[]>,
  settings: KpiSettings,
): { sensors: number; raises: number } {
  let sensors = 0;
  let raises = 0;
  for (const times of raisesBySensor.values()) {
    if (times.length < settings.chatterRaises) continue;
    // A raise is in a run when some chatterRaises consecutive raises around it fit in the window.
    const inRun = new Uint8Array(times.length);
    for (let first = 0; first + settings.chatterRaises - 1 < times.length; first++) {
      const last = first + settings.chatterRaises - 1;
      if (times[last] - times[first] <= settings.chatterWindowMs) inRun.fill(1, first, last + 1);
    }
    let inRunCount = 0;
    for (const bit of inRun) inRunCount += bit;
    if (inRunCount > 0) {
      sensors++;
      raises += inRunCount;
    }
  }
  return { sensors, raises };
}

const byText = (a: string, b: string): number => (a < b ? -1 : a > b ? 1 : 0);

/** What one pass over the events counts: raises (by sensor, sorted), clears, fleeting and stale alerts. */
interface EventTally {
  raisedTimes: number[];
  /** Each sensor's raise times, ascending. */
  raisesBySensor: Map<string, number[]>;
  /** Alerts still open at the end: id -> raised at. */
  open: Map<string, number>;
  cleared: number;
  fleeting: number;
  /** Cleared alerts that had been active longer than staleMs. */
  staleCleared: number;
}

function tallyEvents(events: readonly KpiEvent[], settings: KpiSettings): EventTally {
  const tally: EventTally = {
    raisedTimes: [],
    raisesBySensor: new Map(),
    open: new Map(),
    cleared: 0,
    fleeting: 0,
    staleCleared: 0,
  };
  for (const event of events) {
    if (event.state === 'raised') {
      tally.raisedTimes.push(event.ts);
      let times = tally.raisesBySensor.get(event.sensor);
      if (times === undefined) tally.raisesBySensor.set(event.sensor, (times = []));
      times.push(event.ts);
      tally.open.set(event.id, event.since);
    } else if (event.state === 'cleared') {
      tally.cleared++;
      tally.open.delete(event.id);
      const lasted = event.ts - event.since;
      if (lasted <= settings.fleetingMs) tally.fleeting++;
      if (lasted > settings.staleMs) tally.staleCleared++;
    }
  }
  for (const times of tally.raisesBySensor.values()) times.sort((a, b) => a - b);
  return tally;
}

/** The `topN` sensors with the most raises (ties by id) and each one's share of all `raised`. */
function topSensors(raisesBySensor: Map<string, number[]>, raised: number, topN: number): TopSensor[] {
  return [...raisesBySensor.entries()]
    .map(([sensor, times]) => ({ sensor, raised: times.length }))
    .sort((a, b) => b.raised - a.raised || byText(a.sensor, b.sensor))
    .slice(0, topN)
    .map((top) => ({ ...top, share: top.raised / raised }));
}

/** Raises inside caught incidents per caught incident; null when no incident was caught. */
function raisesPerCaughtIncident(raisesBySensor: Map<string, number[]>, labels: KpiLabels): number | null {
  const exclude = new Set(labels.excludeKinds ?? []);
  const counted = labels.incidents.filter((incident) => !exclude.has(incident.kind));
  const raisedList: RaisedAlert[] = [];
  for (const [sensor, times] of raisesBySensor) for (const ts of times) raisedList.push({ sensor, ts });
  const perIncident = incidentRaises(counted, raisedList, labels.graceMs);
  let caught = 0;
  let inCaught = 0;
  for (const raises of perIncident)
    if (raises > 0) {
      caught++;
      inCaught += raises;
    }
  return caught === 0 ? null : inCaught / caught;
}

/**
 * The alert-system health figures of a stream of alert events over `span`. Raises outside the span
 * still count (the caller chooses the span); periods are those the span touches.
 *
 * @example
 * const kpis = alertKpis(events, { start: firstReadingTs, end: lastReadingTs });
 * kpis.flood.share; // share of 10-minute periods with more than 10 raised
 */
export function alertKpis(
  events: readonly KpiEvent[],
  span: KpiSpan,
  options: Partial<KpiSettings> = {},
  labels?: KpiLabels,
): AlertKpis {
  const settings: KpiSettings = { ...KPI_DEFAULTS, ...options };
  const { raisedTimes, raisesBySensor, open, cleared, fleeting, staleCleared } = tallyEvents(
    events,
    settings,
  );
  let staleOpen = 0;
  for (const since of open.values()) if (span.end - since > settings.staleMs) staleOpen++;

  const raised = raisedTimes.length;
  const spanMs = Math.max(0, span.end - span.start);
  const hours = spanMs / 3_600_000;
  const periods =
    spanMs === 0 && raised === 0
      ? 0
      : Math.floor(span.end / settings.floodWindowMs) - Math.floor(span.start / settings.floodWindowMs) + 1;
  const tenMin = alignedCounts(raisedTimes, settings.floodWindowMs, settings.floodLimit);
  const hour = alignedCounts(raisedTimes, 3_600_000, Infinity);
  const worst = worstWindow(raisedTimes, settings.floodWindowMs);
  const ranked = topSensors(raisesBySensor, raised, settings.topN);
  const topRaised = ranked.reduce((sum, top) => sum + top.raised, 0);

  return {
    hours,
    raised,
    cleared,
    perHour: { average: hours > 0 ? raised / hours : null, peak: hour.peak },
    per10Min: {
      average: spanMs > 0 ? (raised * settings.floodWindowMs) / spanMs : null,
      peak: tenMin.peak,
    },
    worst10min: worst,
    flood: {
      periods,
      floodPeriods: tenMin.over,
      share: periods > 0 ? tenMin.over / periods : null,
      any: worst > settings.floodLimit,
    },
    chattering: chattering(raisesBySensor, settings),
    fleeting,
    stale: { count: staleCleared + staleOpen, activeAtEnd: open.size },
    top: { sensors: ranked, share: raised > 0 ? topRaised / raised : null },
    raisesPerCaught: labels === undefined ? null : raisesPerCaughtIncident(raisesBySensor, labels),
    settings,
  };
}
